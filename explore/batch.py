"""Many drops from a table: validation per row, simulation, the impact table.

The column names here are a contract other programs read; see
``INPUT_COLUMNS`` and ``OUTPUT_COLUMNS``.
"""
from __future__ import annotations

import dataclasses

from pathlib import Path

import numpy as np
import pandas as pd

from hopscape import sim
from hopscape.sim.impact import LAWS, SLIP_HISTORY

from hopscape.sim.limits import DENSITY, FRICTION, REFERENCE_SPEED, RESTITUTION, SPEED_EXPONENT, number_text

from hopscape.sim.contact_load import impact_loads
from hopscape.sim.hertz import FEATURES, RIM_WARNING, rim_edge_default
from hopscape.sim.pair_contact import DEFAULT_CONTACT_MODULUS

from .batch_contract import DIMENSIONS, INPUT_COLUMNS, NUMBERS, OUTPUT_COLUMNS  # noqa: F401 (the contract)
from .contact_inputs import contact_settings
from .defaults import IMPACTS
from .errors import InputError
from . import files
from .files import atomic_write
from .plausibility import drop_warnings
from .quantities import QUANTITIES, radians_within_one_turn

def read_table(path):
    """Read a batch table, CSV or Parquet (chosen by the file ending)."""
    return files.read_table(path, "table")


def write_table(frame, path):
    """Write CSV or Parquet by the file ending, atomically
    (:func:`hopscape.files.atomic_write`); the parent folder is made."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_write(path) as tmp:
        if path.suffix.lower() in (".parquet", ".pq"):
            frame.to_parquet(tmp, index=False)
        else:
            frame.to_csv(tmp, index=False)


def _shown(value):
    """A cell as the user wrote it: 'nan', 'empty', or the text."""
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return "an empty cell or nan"
    if isinstance(value, (float, np.floating)):
        return repr(float(value))
    return repr(str(value))


def _row_errors(frame, law):
    """Per-row reason a drop cannot be simulated ('' where it can)."""
    n = len(frame)
    errors = np.full(n, "", dtype=object)

    def flag(bad, message):
        bad = np.asarray(bad, dtype=bool) & (errors == "")
        errors[bad] = [message(i) for i in np.flatnonzero(bad)]

    def numbers(column):
        return pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)

    kinds = frame["shape"].astype(str).str.strip().str.lower().to_numpy()
    flag(~np.isin(kinds, list(sim.SHAPES)),
         lambda i: f"shape must be one of {', '.join(sim.SHAPES)}, got {frame['shape'].iloc[i]!r}")
    for kind, cls in sim.SHAPES.items():
        for dimension in cls.dimensions:
            values, raw = numbers(dimension.name), frame[dimension.name].to_numpy()
            given = np.ones(n, bool) if dimension.required else ~np.isnan(values)
            flag((kinds == kind) & given & ~dimension.allowed.contains(values),
                 lambda i, d=dimension, v=values, r=raw: f"{d.name} of a {kinds[i]} ({d.meaning}) must be "
                 f"{d.allowed.describe()}, got {_shown(r[i]) if np.isnan(v[i]) else number_text(v[i])}")
    for column in NUMBERS:
        values, raw = numbers(column), frame[column].to_numpy()
        flag(~np.isfinite(values), lambda i, c=column, r=raw: f"{c} must be a finite number, got {_shown(r[i])}")
    for column, allowed in (("density", DENSITY), ("restitution", RESTITUTION), ("friction", FRICTION),
                            ("floor_angle", QUANTITIES["floor_angle"].allowed), ("speed_exponent", SPEED_EXPONENT),
                            ("reference_speed", REFERENCE_SPEED)):
        values = numbers(column)
        flag(~allowed.contains(values), lambda i, c=column, a=allowed, v=values: a.problem(c, v[i]))
    laws = frame["law"].fillna(law).astype(str).str.strip().str.lower().to_numpy() if "law" in frame else np.full(n, law)
    flag(~np.isin(laws, LAWS), lambda i: f"law must be one of {', '.join(LAWS)}, got {laws[i]!r}")
    settings = contact_settings(frame, flag)
    return errors, kinds, laws, settings


def _refuse_near_misses(columns):
    """A column that is not a batch column but spells one nearly (``lenght``) is a
    typo, not an extra column to carry along: refused, since the column it
    meant would silently take its default (a 24 mm pin simulated as a ball)."""
    import difflib

    absent = [c for c in INPUT_COLUMNS if c not in columns]
    typos = [(str(c), close[0]) for c in columns if c not in INPUT_COLUMNS
             for close in [difflib.get_close_matches(str(c), absent, n=1, cutoff=0.8)] if close]
    if typos:
        raise InputError("; ".join(f"column {c!r} is not a batch column: did you mean {meant!r}?" for c, meant in typos)
                         + " (columns far from every batch column are carried along and ignored)")


def run_batch(frame, impacts=IMPACTS, law="energetic", merge_within=sim.MERGE_WITHIN, chunk_size=sim.drop.CHUNK_SIZE,
              progress=None, warn=None, restitution_table=None, model=sim.MODELS[0]):
    """Simulate every valid row; return the impact table (see OUTPUT_COLUMNS).

    Rows that cannot be simulated appear once, with ``impact`` empty and the
    reason in ``error``; they never stop the batch. ``warn``, if given, is
    called once before anything is simulated with the list of warnings
    about implausible values (:mod:`explore.plausibility`), one line per
    column and shape. ``restitution_table`` (``(speed [m/s], restitution)``
    pairs, :class:`sim.Contact`) replaces every row's restitution and
    speed law. ``model`` is :func:`sim.simulate`'s; each row's contact
    modulus is its own ``E*`` (rows without materials: the engine's
    default pair, :data:`sim.pair_contact.DEFAULT_CONTACT_MODULUS`).
    """
    if law not in LAWS:
        raise InputError(f"--law must be one of {', '.join(LAWS)}, got {law!r}")
    frame = frame.copy()
    _refuse_near_misses(frame.columns)
    missing = [c for c, (_, default) in INPUT_COLUMNS.items() if default is None and c not in frame
               and not (c == "law")]
    if missing:
        required = [c for c, (_, default) in INPUT_COLUMNS.items() if default is None and c != "law"]
        raise InputError(f"the drop table lacks the column(s) {', '.join(missing)} (required: "
                         f"{', '.join(required)}; optional: {', '.join(c for c in INPUT_COLUMNS if c not in required)})")
    for column, (_, default) in INPUT_COLUMNS.items():
        if column not in frame and default is not None:
            frame[column] = default
        elif default is not None and column in NUMBERS:
            # an empty cell of an optional column takes its default, like a missing column
            frame[column] = frame[column].where(frame[column].notna(), default)
    if frame.empty:
        return pd.DataFrame(columns=list(OUTPUT_COLUMNS))
    errors, kinds, laws, (e_star, rim_edge, breakage) = _row_errors(frame, law)
    ok = errors == ""
    num = {c: pd.to_numeric(frame[c], errors="coerce").to_numpy(dtype=float)
           for c in DIMENSIONS + NUMBERS + MODULI}
    good = np.flatnonzero(ok)

    def bodies(rows):
        sizes = {name: num[name][rows] for name in DIMENSIONS}
        return sim.shapes.make_shapes(kinds[rows], density=num["density"][rows], **sizes)

    if warn is not None:
        lines = _warnings(kinds, num, good, bodies)
        if good.size:
            # a body without a round part has sharp rims: not Hertzian
            _, _, round_long, round_wide = bodies(good).profile
            sharp = good[(round_long == 0) & (round_wide == 0) & np.isfinite(e_star[good])]
            if sharp.size:
                lines.append(f"{sharp.size} row(s) (first: drop {sharp[0]}): {RIM_WARNING}")
        warn(lines)
    # a body inside the floor is a per-row error too
    if good.size:
        shapes = bodies(good)
        gap = num["height"][good] - shapes.depth(radians_within_one_turn(num["angle"][good]))
        inside = gap <= 0
        errors[good[inside]] = [f"height {num['height'][i]} m puts the body touching or inside the floor "
                                f"(its lowest point would be at {g:.4g} m)" for i, g in zip(good[inside], gap[inside])]
        good = good[~inside]
    tables = []
    if good.size:
        shapes = bodies(good)
        release = sim.Release(height=num["height"][good], angle=radians_within_one_turn(num["angle"][good]),
                              spin=num["spin"][good], vx=num["vx"][good], vy=num["vy"][good],
                              floor_angle=np.radians(num["floor_angle"][good]))
        contact = sim.Contact(num["restitution"][good], num["friction"][good], tuple(laws[good]),
                              speed_exponent=num["speed_exponent"][good], reference_speed=num["reference_speed"][good],
                              restitution_table=restitution_table)
        modulus = np.where(np.isnan(e_star[good]), DEFAULT_CONTACT_MODULUS, e_star[good])
        result = sim.simulate(shapes, release, dataclasses.replace(contact, contact_modulus=modulus),
                              impacts=impacts, chunk_size=chunk_size, model=model)
        edge = rim_edge[good]
        loads = impact_loads(result, e_star[good], np.where(np.isnan(edge), rim_edge_default(shapes.profile), edge),
                             (breakage[0][good], breakage[1][good]))
        tables.append(impact_table(result, merge_within, drop_ids=good, loads=loads))
        never = result.count == 0
        if never.any():  # the contact search gave up before the first impact
            tables.append(pd.DataFrame({"drop": good[never], "status": "failed",
                                        "error": "the contact search did not converge before the first impact"}))
    bad = np.flatnonzero(errors != "")
    if bad.size:
        tables.append(pd.DataFrame({"drop": bad, "error": errors[bad]}))
    table = pd.concat(tables, ignore_index=True) if tables else pd.DataFrame(columns=list(OUTPUT_COLUMNS))
    table = table.reindex(columns=list(OUTPUT_COLUMNS))
    table["error"] = table["error"].fillna("")
    table = table.sort_values(["drop", "impact"], kind="stable", na_position="first").reset_index(drop=True)
    table["impact"] = table["impact"].astype("Int64")
    table["bounce"] = table["bounce"].astype("Int64")
    table["end"] = table["end"].astype("Int64")
    return table


#: The contact model's numbers that get unit warnings (explore.plausibility).
MODULI = ("body_modulus", "floor_modulus")


def _warnings(kinds, num, good, bodies):
    """Warning lines for the implausible values of the rows ``good``."""
    lines = []
    for kind in sim.SHAPES:
        rows = good[kinds[good] == kind]
        if not rows.size:
            continue
        values = {name: num[name][rows] for name in NUMBERS + DIMENSIONS + MODULI}
        for name, bad, message in drop_warnings(bodies(rows), values):
            count = int(bad.sum())
            lines.append(f"column {name}: {count} {kind} row{'s' if count > 1 else ''} (first: drop "
                         f"{rows[np.argmax(bad)]}): {message}")
    return lines


#: Output columns of the contact model taken from :func:`sim.contact_load.impact_loads`.
CONTACT_OUTPUTS = ("normal_speed", "tangential_speed", "energy_lost", "restitution_used", "contact_time", "peak_force",
                   "indentation", "peak_pressure", "breakage_probability")


def impact_table(result, merge_within=sim.MERGE_WITHIN, drop_ids=None, loads=None):
    """One row per drop and impact from a :class:`sim.DropResult`; the
    contact model's columns from ``loads`` (:func:`sim.contact_load.impact_loads`;
    without it only the struck feature, speeds and energy lost are given)."""
    n, k = result.time.shape
    drop_ids = np.arange(n) if drop_ids is None else np.asarray(drop_ids)
    exists = np.arange(k)[None, :] < result.count[:, None]
    rows, cols = np.nonzero(exists)
    trans_b, rot_b, pot = result.energy_before()
    trans_a, rot_a, _ = result.energy_after()
    bounces = sim.group_bounces(result, merge_within)
    pick = (rows, cols)
    if loads is None:
        loads = impact_loads(result, np.nan)
    contact = {"struck": np.asarray(FEATURES, dtype=object)[loads["feature"][pick]],
               **{name: loads[name][pick] for name in CONTACT_OUTPUTS}}
    return pd.DataFrame({
        "drop": drop_ids[rows],
        "impact": cols + 1,
        "time": result.time[pick],
        "angle": (np.degrees(result.theta[pick]) + 180.0) % 360.0 - 180.0,
        "vx": result.vx[pick], "vy": result.vy[pick], "spin": result.spin[pick],
        "impulse_normal": result.impulse_normal[pick],
        "impulse_tangential": result.impulse_tangential[pick],
        "energy_before": (trans_b + rot_b + pot)[pick],
        "energy_after": (trans_a + rot_a + pot)[pick],
        "peak_centre": result.peak_centre[pick], "peak_bottom": result.peak_bottom[pick],
        "peak_top": result.peak_top[pick], "flight": result.flight[pick],
        "x": result.x[pick], "y": result.y[pick],
        "end": result.end[pick],
        "slip": np.asarray(SLIP_HISTORY, dtype=object)[result.slip[pick]],
        "energy_gain": result.energy_gain[pick],
        "bounce": np.where(bounces.index[pick] > 0, bounces.index[pick], np.nan),  # none: sustained contact
        "status": np.asarray(sim.STATUS, dtype=object)[result.status[rows]],
        "error": "",
        **contact,
    })
