"""Recommended release conditions that survive the rig's release errors.

Every grid cell was re-dropped ``tolerance.draws`` times with uniform
errors in release angle, height and spin (the ``robust`` stage). A cell
meets ``picks.target`` when the probability of the goal under those errors
(the event when the goal is to seek it, its absence when it is to avoid it)
reaches the target. Cells that meet it come first, ranked by their margin
(:func:`explore.regions.margins`: grid steps to the nearest cell that
fails), then by the goal's probability, then by the flip rate (lowest
first), then by the straight distance to the nearest failing cell, so a
cell in the first row of the grid never wins a tie by its place in the
table. A cell is chaotic when its outcome under tolerance differs from the
exact release's in more than ``picks.chaotic_flip_rate`` of the drops.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .plan import cell_coordinates
from .regions import as_array, margins
from .study import COLUMN, Study
from .under_tolerance import goal_view, tolerance_effect


def judged_cells(study: Study, robust: pd.DataFrame, grid: pd.DataFrame) -> pd.DataFrame:
    """Every grid cell with its outcome under tolerance, target and margin.

    Parameters
    ----------
    study : Study
        The validated study (goal, picks settings, grid).
    robust, grid : pandas.DataFrame
        The ``robust`` and ``grid`` stages' result tables
        (see :func:`explore.under_tolerance.tolerance_effect`).

    Returns
    -------
    pandas.DataFrame
        One row per cell, indexed by ``cell``: the columns of
        :func:`~explore.under_tolerance.goal_view`, the grid values,
        ``margin_steps`` [grid steps], ``nearest_fail_steps`` [grid steps]
        and ``chaotic``.
    """
    keys = study.gridded()
    cells = goal_view(study, tolerance_effect(robust, grid)).join(cell_coordinates(study).set_index("cell"))
    ok, _ = as_array(cells, keys, "meets_target")
    steps, nearest = margins(ok)
    position, _ = as_array(cells.assign(position=np.arange(len(cells))), keys, "position")
    cells["margin_steps"] = 0
    cells["nearest_fail_steps"] = 0.0
    cells.iloc[position.ravel(), cells.columns.get_loc("margin_steps")] = steps.ravel()
    cells.iloc[position.ravel(), cells.columns.get_loc("nearest_fail_steps")] = nearest.ravel()
    cells["chaotic"] = cells["flip_rate"] > study.picks_settings.chaotic_flip_rate
    return cells


def _note(row, target, seek):
    words = []
    if not row["meets_target"]:
        words.append(f"below the target {target:.0%} under the stated tolerance")
    elif row["margin_steps"] == 1:
        words.append("on the edge of its safe region or of the swept range")
    if row["chaotic"]:
        words.append(f"chaotic: the outcome flips in {row['flip_rate']:.0%} of toleranced drops; tighten the "
                     "rig's tolerance or choose a calmer cell")
    return "; ".join(words)


def picks(study: Study, robust: pd.DataFrame, grid: pd.DataFrame, cells=None) -> pd.DataFrame:
    """The grid cells to recommend, best first, under the release tolerance.

    Cells where half the drops or more would start inside the floor are
    left out; when fewer than ``picks.count`` cells meet the target, the
    best of the others follow, with a note.

    Parameters
    ----------
    study : Study
        The validated study: ``analyses.picks`` (count, target,
        chaotic_flip_rate; the schema's defaults when absent) and
        ``metric.goal``.
    robust : pandas.DataFrame
        The ``robust`` stage's result table (``cell``, ``pair``, ``value``,
        ``event``).
    grid : pandas.DataFrame
        The ``grid`` stage's result table, in stage order.
    cells : pandas.DataFrame, optional
        :func:`judged_cells` of the same tables, when already at hand.

    Returns
    -------
    pandas.DataFrame
        One row per pick: ``rank`` (1 = best), the cell's grid values (as
        in the study, e.g. ``angle_deg`` [deg]), ``goal_probability`` with
        its 95 % Wilson interval ``goal_low``, ``goal_high`` [-],
        ``margin_steps`` [grid steps], ``flip_rate`` [-],
        ``event_probability`` [-], ``mean_value_under_tolerance`` and
        ``mean_change_under_tolerance`` (the value's spread; the metric's
        unit, [-]), ``inside_floor_fraction`` [-], ``nominal_value`` (mean
        of the exact drops), with an angle grid ``angle_window_low_deg``
        and ``angle_window_high_deg`` [deg] (the run of neighbouring grid
        angles, other grid values held, that meet the target; NaN if the
        pick itself does not), ``meets_target``, ``chaotic``, ``note``
        (plain words) and ``cell``.
    """
    settings = study.picks_settings
    seek = study.metric.goal == "seek"
    keys = study.gridded()
    cols = [COLUMN[k] for k in keys]
    cells = judged_cells(study, robust, grid) if cells is None else cells   # the analysis has judged them already
    cells = cells.assign(nominal_value=grid.groupby("cell", sort=True)["value"].mean())
    cells = cells.rename(columns={"mean_value": "mean_value_under_tolerance",
                                  "mean_change": "mean_change_under_tolerance"}).reset_index()
    order = cells.sort_values(["meets_target", "margin_steps", "goal_probability", "flip_rate",
                               "nearest_fail_steps", "mean_value_under_tolerance"],
                              ascending=[False, False, False, True, False, not seek], kind="stable")
    order = order[order["inside_floor_fraction"] < 0.5]
    chosen = order.head(settings.count).copy()
    if "angle" in keys:
        _angle_windows(chosen, cells, cols)
    chosen["note"] = [_note(row, settings.target, seek) for _, row in chosen.iterrows()]
    chosen.insert(0, "rank", np.arange(1, len(chosen) + 1))
    first = ["rank"] + cols + ["goal_probability", "goal_low", "goal_high", "margin_steps", "flip_rate",
                               "event_probability", "mean_value_under_tolerance", "mean_change_under_tolerance",
                               "inside_floor_fraction", "nominal_value"]
    windows = [c for c in ("angle_window_low_deg", "angle_window_high_deg") if c in chosen]
    return chosen[first + windows + ["meets_target", "chaotic", "note", "cell"]].reset_index(drop=True)


def _angle_windows(chosen, cells, cols):
    """Add the run of neighbouring grid angles (other grid values held) that meet the target."""
    angle_col = COLUMN["angle"]
    lows, highs = [], []
    for _, row in chosen.iterrows():
        same = np.ones(len(cells), bool)
        for c in cols:
            if c != angle_col:
                same &= np.isclose(cells[c], row[c])
        line = cells[same].sort_values(angle_col)
        ok = line["meets_target"].to_numpy()
        angles = line[angle_col].to_numpy()
        i = int(np.flatnonzero(np.isclose(angles, row[angle_col]))[0])
        if not ok[i]:
            lows.append(np.nan)
            highs.append(np.nan)
            continue
        lo = hi = i
        while lo > 0 and ok[lo - 1]:
            lo -= 1
        while hi < len(ok) - 1 and ok[hi + 1]:
            hi += 1
        lows.append(angles[lo])
        highs.append(angles[hi])
    chosen["angle_window_low_deg"] = lows
    chosen["angle_window_high_deg"] = highs
