"""Recommended release conditions that survive the rig's release errors.

Every grid cell was re-dropped ``tolerance.draws`` times with uniform
errors in release angle, height and spin (the ``robust`` stage). A cell's
score is the probability of the metric's event under those errors: highest
first when the goal is to seek the high rebound, lowest first when it is to
avoid it. The angle window of a pick is the run of neighbouring grid angles
(the other grid quantities held) that still meet ``picks.target``. A pick
is flagged chaotic when release errors change the metric by more than
``picks.chaotic_spread`` on average (each toleranced drop compared with the
same drop released exactly).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .maps import tolerance_effect
from .plan import cell_coordinates
from .study import COLUMN, Study


def picks(study: Study, robust: pd.DataFrame, grid: pd.DataFrame) -> pd.DataFrame:
    """The grid cells to recommend, best first, under the release tolerance.

    Cells are ranked by the probability of the metric's event among their
    toleranced re-drops (highest first to seek it, lowest first to avoid
    it), ties by the mean value under tolerance; cells where half the drops
    or more would start inside the floor are left out.

    Parameters
    ----------
    study : Study
        The validated study: ``analyses.picks`` (count, target,
        chaotic_spread; defaults 5, 0.8, 0.1 when absent) and
        ``metric.goal``.
    robust : pandas.DataFrame
        The ``robust`` stage's result table (``cell``, ``pair``, ``value``,
        ``event``).
    grid : pandas.DataFrame
        The ``grid`` stage's result table, in stage order.

    Returns
    -------
    pandas.DataFrame
        One row per pick: ``rank`` (1 = best), the cell's grid values (as
        in the study, e.g. ``angle_deg`` [deg]), ``event_probability`` [-],
        ``mean_value_under_tolerance`` and ``mean_change_under_tolerance``
        (the metric's unit, [-]), ``inside_floor_fraction`` [-],
        ``nominal_value`` (mean of the exact drops), with an angle grid
        ``angle_window_low_deg`` and ``angle_window_high_deg`` [deg] (the
        run of neighbouring grid angles, other grid values held, that meet
        the target; NaN if the pick itself does not), ``chaotic`` (mean
        change above ``chaotic_spread``), ``note`` (plain words) and
        ``cell``.
    """
    settings = study.analyses.picks
    count = settings.count if settings else 5
    target = settings.target if settings else 0.8
    chaotic_spread = settings.chaotic_spread if settings else 0.1
    seek = study.metric.goal == "seek"
    keys = study.gridded()
    cols = [COLUMN[k] for k in keys]
    effect = tolerance_effect(robust, grid)
    cells = pd.DataFrame({
        "event_probability": effect["event_probability"],
        "mean_value_under_tolerance": effect["mean_value"],
        "mean_change_under_tolerance": effect["mean_change"],
        "inside_floor_fraction": effect["inside_floor_fraction"],
    })
    cells = cells.join(cell_coordinates(study).set_index("cell"))
    cells["nominal_value"] = grid.groupby("cell", sort=True)["value"].mean()
    cells = cells.reset_index()
    order = cells.sort_values(["event_probability", "mean_value_under_tolerance"],
                              ascending=[not seek, not seek], kind="stable")
    order = order[order["inside_floor_fraction"] < 0.5]
    chosen = order.head(count).copy()
    meets = (cells["event_probability"] >= target) if seek else (cells["event_probability"] <= 1 - target)
    angle_col = COLUMN["angle"]
    lows, highs, notes = [], [], []
    for _, row in chosen.iterrows():
        note = []
        if "angle" in keys:
            same = np.ones(len(cells), bool)
            for c in cols:
                if c != angle_col:
                    same &= np.isclose(cells[c], row[c])
            line = cells[same].sort_values(angle_col)
            ok = meets[line.index].to_numpy()
            angles = line[angle_col].to_numpy()
            i = int(np.flatnonzero(np.isclose(angles, row[angle_col]))[0])
            if ok[i]:
                lo = hi = i
                while lo > 0 and ok[lo - 1]:
                    lo -= 1
                while hi < len(ok) - 1 and ok[hi + 1]:
                    hi += 1
                lows.append(angles[lo])
                highs.append(angles[hi])
            else:
                lows.append(np.nan)
                highs.append(np.nan)
                note.append(f"no angle here reaches the target {target:.0%}")
        if row["mean_change_under_tolerance"] > chaotic_spread:
            note.append("chaotic: release errors move the outcome a lot; tighten the rig's tolerance "
                        "or choose a calmer region")
        elif not (row["event_probability"] >= target if seek else row["event_probability"] <= 1 - target):
            note.append(f"below the target {target:.0%} under the stated tolerance")
        notes.append("; ".join(note))
    if "angle" in keys:
        chosen["angle_window_low_deg"] = lows
        chosen["angle_window_high_deg"] = highs
    chosen["chaotic"] = chosen["mean_change_under_tolerance"] > chaotic_spread
    chosen["note"] = notes
    chosen.insert(0, "rank", np.arange(1, len(chosen) + 1))
    first = ["rank"] + cols
    rest = [c for c in chosen.columns if c not in first and c != "cell"]
    return chosen[first + rest + ["cell"]].reset_index(drop=True)
