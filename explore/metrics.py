"""Simulate a table of study drops and add the metric columns.

Metric columns (one row per drop):

``ratio_1`` .. ``ratio_K``
    rebound ratio of each visible bounce for the study's reference point
    (peak height / release height of that point) [-]; 0 where the drop has
    fewer bounces (it never rose again within ``run.impacts`` impacts).
``best_later_ratio``
    the largest of ``ratio_2`` and later [-].
``beats_release``, ``beats_first``
    some bounce rises above the release height of the reference point; a
    later bounce rises above the first.
``value``
    the study's metric for this drop, as its kind computes it
    (:data:`explore.metric_kinds.METRIC_KINDS`): a ratio, or 0/1 for a flag.
``event``
    the metric's event: value above ``metric.threshold``, or the flag.
``energy_bound_ratio``
    highest the centre could ever rise / release height of the centre [-];
    NaN on an inclined floor, where sliding downhill can bring energy in.
``energy_gain``
    some impact created energy (Newton's law only).
``status``
    impacts | settled | contact | could_vault | failed | inside floor
    (:mod:`sim.drop`).

Heights and ratios are measured normal to the floor (``floor_angle``, 0
where the study does not give it).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from hopscape import sim

from .metric_kinds import METRIC_KINDS, Outcome
from .quantities import radians_within_one_turn
from .study import COLUMN, Study


def _shape(study, frame):
    def column(name):
        return frame[COLUMN[name]].to_numpy() if COLUMN[name] in frame else None
    return study.body.make_shape(column("diameter"), column("density"), aspect_ratio=column("aspect_ratio"),
                                 length=column("length"))


def simulate_frame(study: Study, frame: pd.DataFrame) -> pd.DataFrame:
    """Simulate every row of ``frame`` (a chunk of a stage); return it with
    the metric columns added."""
    n = len(frame)
    impacts = study.run.impacts
    out = frame.reset_index(drop=True).copy()
    shape = _shape(study, out)
    angle = radians_within_one_turn(out[COLUMN["angle"]].to_numpy())
    height = out[COLUMN["height"]].to_numpy()
    centre = height + (shape.depth(angle) if study.release.height_of == "bottom" else 0.0)
    inside = centre - shape.depth(angle) <= 0
    ok = ~inside
    ratios = np.zeros((n, impacts))
    heights = np.zeros((n, impacts))
    bound = np.full(n, np.nan)
    gain = np.zeros(n, bool)
    status = np.full(n, "inside floor", dtype=object)
    bounces_seen = np.zeros(n, np.int16)
    if ok.any():
        idx = np.flatnonzero(ok)
        part = _shape(study, out.iloc[idx])
        release = sim.Release(height=centre[idx], angle=angle[idx],
                              spin=out[COLUMN["spin"]].to_numpy()[idx],
                              vx=out[COLUMN["vx"]].to_numpy()[idx], vy=out[COLUMN["vy"]].to_numpy()[idx],
                              floor_angle=np.radians(out[COLUMN["floor_angle"]].to_numpy()[idx])
                              if COLUMN["floor_angle"] in out else 0.0)
        contact = sim.Contact(out[COLUMN["restitution"]].to_numpy()[idx],
                              out[COLUMN["friction"]].to_numpy()[idx], study.contact.law)
        # only the study's reference point's peaks are read: the others' searches are skipped
        result = sim.simulate(part, release, contact, impacts=impacts, chunk_size=max(len(idx), 1),
                              peaks=(study.metric.reference,))
        b = sim.group_bounces(result, study.run.merge_window)
        ratios[idx] = np.nan_to_num(b.ratio[study.metric.reference], nan=0.0)
        heights[idx] = np.nan_to_num(b.height[study.metric.reference], nan=0.0)
        bound[idx] = result.energy_bound / result.release_height("centre")
        gain[idx] = result.energy_gain.any(axis=1)
        status[idx] = np.asarray(sim.STATUS, dtype=object)[result.status]
        bounces_seen[idx] = b.count
    metric = study.metric
    kind = METRIC_KINDS[metric.kind]
    outcome = Outcome(ratios, heights)
    best_later, beats_release, beats_first = outcome.best_later, outcome.beats_release, outcome.beats_first
    value = np.where(inside, np.nan, kind.value(outcome, metric))
    event = kind.event(value, metric)
    for k in range(impacts):
        out[f"ratio_{k + 1}"] = np.where(inside, np.nan, ratios[:, k])
    out["best_later_ratio"] = np.where(inside, np.nan, best_later)
    out["beats_release"] = beats_release
    out["beats_first"] = beats_first
    out["value"] = value
    out["event"] = event & ~inside
    out["bounces"] = bounces_seen
    out["energy_bound_ratio"] = bound
    out["energy_gain"] = gain
    out["status"] = pd.Categorical(status, categories=list(sim.STATUS) + ["inside floor"])
    return out
