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
    the study's metric for this drop: the chosen ratio, or 0/1 for a flag.
``event``
    the metric's event: ratio above ``metric.threshold``, or the flag.
``energy_bound_ratio``
    highest the centre could ever rise / release height of the centre [-].
``energy_gain``
    some impact created energy (Newton's law only).
``status``
    impacts | settled | resting | failed | inside floor.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

import sim

from .study import COLUMN, Study


def _shape(study, frame):
    body = study.body
    diameter = frame[COLUMN["diameter"]].to_numpy()
    density = frame[COLUMN["density"]].to_numpy()
    cls = sim.SHAPES[body.shape]
    if body.shape == "sphere":
        return cls(density=density, radius=diameter / 2)
    if body.aspect_ratio is not None:
        return cls.from_aspect_ratio(frame[COLUMN["aspect_ratio"]].to_numpy(), diameter, density)
    return sim.make_shape(body.shape, length=frame[COLUMN["length"]].to_numpy(), radius=diameter / 2,
                          density=density)


def simulate_frame(study: Study, frame: pd.DataFrame) -> pd.DataFrame:
    """Simulate every row of ``frame`` (a chunk of a stage); return it with
    the metric columns added."""
    n = len(frame)
    impacts = study.run.impacts
    out = frame.reset_index(drop=True).copy()
    shape = _shape(study, out)
    angle = np.radians(out[COLUMN["angle"]].to_numpy())
    height = out[COLUMN["height"]].to_numpy()
    centre = height + (shape.depth(angle) if study.release.height_of == "bottom" else 0.0)
    inside = centre - shape.depth(angle) <= 0
    ok = ~inside
    ratios = np.zeros((n, impacts))
    best_later = np.zeros(n)
    beats_release = np.zeros(n, bool)
    beats_first = np.zeros(n, bool)
    bound = np.full(n, np.nan)
    gain = np.zeros(n, bool)
    status = np.full(n, "inside floor", dtype=object)
    bounces_seen = np.zeros(n, np.int16)
    if ok.any():
        idx = np.flatnonzero(ok)
        part = _shape(study, out.iloc[idx])
        release = sim.Release(height=centre[idx], angle=angle[idx],
                              spin=out[COLUMN["spin"]].to_numpy()[idx],
                              vx=out[COLUMN["vx"]].to_numpy()[idx], vy=out[COLUMN["vy"]].to_numpy()[idx])
        contact = sim.Contact(out[COLUMN["restitution"]].to_numpy()[idx],
                              out[COLUMN["friction"]].to_numpy()[idx], study.contact.law)
        result = sim.simulate(part, release, contact, impacts=impacts, chunk_size=max(len(idx), 1))
        b = sim.group_bounces(result, study.run.merge_ms / 1e3)
        ref = study.metric.reference
        r = np.nan_to_num(b.ratio[ref], nan=0.0)
        ratios[idx] = r
        best_later[idx] = r[:, 1:].max(axis=1) if impacts > 1 else 0.0
        beats_release[idx] = r.max(axis=1) > 1.0
        beats_first[idx] = best_later[idx] > r[:, 0]
        bound[idx] = result.energy_bound / result.release_height("centre")
        gain[idx] = result.energy_gain.any(axis=1)
        status[idx] = np.asarray(sim.STATUS, dtype=object)[result.status]
        bounces_seen[idx] = b.count
    metric = study.metric
    if metric.kind == "ratio":
        if metric.bounce == "later":
            value = best_later
        elif metric.bounce == "first":
            value = ratios[:, 0]
        else:
            value = ratios[:, metric.bounce - 1]
        event = value > metric.threshold
    else:
        event = beats_release if metric.kind == "beats_release" else beats_first
        value = event.astype(float)
    value = np.where(inside, np.nan, value)
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
