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
``peak_force_N``, ``peak_pressure_Pa``, ``contact_time_s``, ``breakage_probability``
    with the contact model's materials given (docs/physics.md section 9):
    the largest contact force and pressure of the drop's impacts, its
    shortest contact (what a camera must resolve), and the probability that
    some impact breaks the body (``1 - prod(1 - S_i)``, Vogel & Peukert's
    curve per impact; NaN without its parameters). Line and face contacts
    (not Hertzian) do not count.

Heights and ratios are measured normal to the floor (``floor_angle``, 0
where the study does not give it).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from hopscape import sim
from hopscape.sim.contact_load import impact_loads
from hopscape.sim.hertz import rim_edge_default

from .contact_inputs import single_settings

from .metric_kinds import METRIC_KINDS, Outcome
from .quantities import radians_within_one_turn
from .study import COLUMN, Study, contact_settings

#: Per-drop columns of the contact model, from :func:`drop_loads`.
CONTACT_COLUMNS = {"peak_force": "peak_force_N", "peak_pressure": "peak_pressure_Pa",
                   "contact_time": "contact_time_s", "breakage_probability": "breakage_probability"}


def drop_loads(loads):
    """Per drop from :func:`sim.contact_load.impact_loads`: the largest peak
    force and pressure, the shortest contact, and the probability that some
    impact breaks the body."""
    def fold(values, reduce):
        finite = np.isfinite(values)
        filled = np.where(finite, values, -np.inf if reduce is np.max else np.inf)
        return np.where(finite.any(axis=1), reduce(filled, axis=1), np.nan)
    survive = np.where(np.isfinite(loads["breakage_probability"]), 1 - loads["breakage_probability"], 1.0)
    breakage = np.where(np.isfinite(loads["breakage_probability"]).any(axis=1), 1 - survive.prod(axis=1), np.nan)
    return {"peak_force": fold(loads["peak_force"], np.max), "peak_pressure": fold(loads["peak_pressure"], np.max),
            "contact_time": fold(loads["contact_time"], np.min), "breakage_probability": breakage}


def _shape(study, frame):
    def column(name):
        return frame[COLUMN[name]].to_numpy() if COLUMN[name] in frame else None
    return study.body.make_shape(column("diameter"), column("density"), aspect_ratio=column("aspect_ratio"),
                                 length=column("length"))


def drop_inputs(study: Study, frame: pd.DataFrame):
    """What :func:`sim.simulate` needs for the rows of a stage table
    ``frame`` that start above the floor: ``(rows, shape, release,
    contact)``, ``rows`` their positions in ``frame`` (the others would
    start touching or inside the floor). The contact carries the study's
    law, speed law or restitution table and, with materials, its ``E*``."""
    def column(name, default=None):
        return frame[COLUMN[name]].to_numpy() if COLUMN[name] in frame else default

    whole = _shape(study, frame)
    angle = radians_within_one_turn(column("angle"))
    centre = column("height") + (whole.depth(angle) if study.release.height_of == "bottom" else 0.0)
    rows = np.flatnonzero(centre - whole.depth(angle) > 0)
    zero = np.zeros(len(frame))
    e_star, _, _ = single_settings(contact_settings(study.body, study.contact))
    shape = _shape(study, frame.iloc[rows])
    release = sim.Release(height=centre[rows], angle=angle[rows], spin=column("spin", zero)[rows],
                          vx=column("vx", zero)[rows], vy=column("vy", zero)[rows],
                          # a level floor given once costs no cosine per drop
                          floor_angle=np.radians(column("floor_angle")[rows]) if COLUMN["floor_angle"] in frame
                          else 0.0)
    contact = sim.Contact(column("restitution")[rows], column("friction")[rows], study.contact.law,
                          speed_exponent=column("speed_exponent", zero)[rows],
                          reference_speed=study.contact.reference_speed,
                          restitution_table=None if study.contact.restitution_table is None
                          else tuple(study.contact.restitution_table),
                          contact_modulus=float(e_star) if np.isfinite(e_star) else None)
    return rows, shape, release, contact


def simulate_frame(study: Study, frame: pd.DataFrame) -> pd.DataFrame:
    """Simulate every row of ``frame`` (a chunk of a stage); return it with
    the metric columns added."""
    n = len(frame)
    impacts = study.run.impacts
    out = frame.reset_index(drop=True).copy()
    idx, part, release, contact = drop_inputs(study, out)
    ok = np.zeros(n, bool)
    ok[idx] = True
    inside = ~ok
    ratios = np.zeros((n, impacts))
    heights = np.zeros((n, impacts))
    bound = np.full(n, np.nan)
    gain = np.zeros(n, bool)
    status = np.full(n, "inside floor", dtype=object)
    e_star, edge, breakage = single_settings(contact_settings(study.body, study.contact))
    materials = bool(np.isfinite(e_star))
    per_drop = {name: np.full(n, np.nan) for name in CONTACT_COLUMNS}
    bounces_seen = np.zeros(n, np.int16)
    if ok.any():
        # only the study's reference point's peaks are read: the others' searches are skipped
        result = sim.simulate(part, release, contact, impacts=impacts, chunk_size=max(len(idx), 1),
                              peaks=(study.metric.reference,), model=study.run.model)
        b = sim.group_bounces(result, study.run.merge_window)
        ratios[idx] = np.nan_to_num(b.ratio[study.metric.reference], nan=0.0)
        heights[idx] = np.nan_to_num(b.height[study.metric.reference], nan=0.0)
        bound[idx] = result.energy_bound / result.release_height("centre")
        gain[idx] = result.energy_gain.any(axis=1)
        status[idx] = np.asarray(sim.STATUS, dtype=object)[result.status]
        bounces_seen[idx] = b.count
        if materials:
            loads = impact_loads(result, e_star, rim_edge_default(part.profile) if np.isnan(edge) else edge,
                                 None if np.isnan(breakage[0]) else breakage)
            for name, value in drop_loads(loads).items():
                per_drop[name][idx] = value
    metric = study.metric
    kind = METRIC_KINDS[metric.kind]
    outcome = Outcome(ratios, heights, per_drop if materials else None)
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
    if materials:
        for name, column in CONTACT_COLUMNS.items():
            out[column] = per_drop[name]
    return out
