"""All analyses of a finished run: maps, curves, robustness, ranking, picks.

Where the analysis writes in the run folder is declared here
(:data:`FIGURE_FOLDER`, :data:`PICKS_FILE`, :func:`output_names`), the
sensitivity files by each method's declaration in
:data:`explore.sensitivity.METHODS`.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import maps
from .picks import judged_cells, picks as make_picks
from .regions import quantity_range_words, safe_regions
from .study import COLUMN
from .robust_map import robustness
from .sensitivity import METHODS, RANKING_FILE, output_files
from .files import write_csv
from .stage_tables import stage_columns

#: Folder of every figure of a run (maps, curves, robustness, sensitivity
#: charts) and of the CSV file behind each map, inside the run folder.
FIGURE_FOLDER = "maps"

#: The recommended drop conditions, inside the run folder.
PICKS_FILE = "picks.csv"

#: The connected regions of the grid where the target holds under
#: tolerance, as ranges, inside the run folder.
SAFE_REGIONS_FILE = "safe-regions.csv"


def output_names():
    """Every file and folder :func:`analyse` can write, relative to the run folder.

    Returns
    -------
    tuple of str
        The figure folder, the picks and safe-region files and every sensitivity method's
        CSV files (whichever method a run used).
    """
    return (FIGURE_FOLDER, PICKS_FILE, SAFE_REGIONS_FILE, *output_files())


@dataclass
class Artefacts:
    """What :func:`analyse` made: tables, and paths of the files it wrote."""

    maps: list = field(default_factory=list)        # (title, [image paths], csv path)
    curves: list = field(default_factory=list)
    robustness: list = field(default_factory=list)
    method: str | None = None                       # key in METHODS of the sensitivity method that ran
    ranking: pd.DataFrame | None = None             # that method's ranking, rank 1 first
    sensitivity_tables: dict = field(default_factory=dict)  # Table.key -> its further tables
    ranking_charts: list = field(default_factory=list)
    picks: pd.DataFrame | None = None
    safe_regions: pd.DataFrame | None = None        # explore.regions.safe_regions over the judged cells
    headline: str | None = None                     # the event never / always happened: one sentence
    notes: list = field(default_factory=list)
    seconds: dict = field(default_factory=dict)


def _sensitivity(outcome, art, folder, figures):
    """Rank the quantities with the plan's method; write its tables and charts."""
    plan = outcome.plan
    method = METHODS[plan.method]
    art.method = method.name
    table = stage_columns(outcome.tables, method.name, ["sample", "value"]).sort_values("sample")
    y = table["value"].to_numpy(dtype=float)
    missing = int(np.isnan(y).sum())
    if missing:
        art.notes.append(f"{missing} sensitivity drop(s) would start inside the floor; they count as "
                         "no rebound (metric 0) in the ranking.")
        y = np.nan_to_num(y, nan=0.0)
    found = method.analyse(plan, y)
    art.ranking = found["ranking"].sort_values("rank").reset_index(drop=True)
    write_csv(art.ranking, folder / RANKING_FILE)
    for extra in method.tables:
        frame = found.get(extra.key)
        if frame is not None and len(frame):
            art.sensitivity_tables[extra.key] = frame
            write_csv(frame, folder / extra.file)
    shown = {"ranking": art.ranking, **art.sensitivity_tables}
    for picture in method.pictures:
        if picture.table in shown:
            path = figures / picture.file
            picture.draw(shown[picture.table], path, outcome.study.name)
            art.ranking_charts.append(path)


def analyse(outcome) -> Artefacts:
    """Every analysis the study asks for, on a finished run.

    Parameters
    ----------
    outcome : explore.runner.RunOutcome
        The run: its study, folder, stage tables and sensitivity plan.

    Returns
    -------
    Artefacts
        The maps, curves and robustness figures (paths), the sensitivity
        ranking with its method's further tables and charts, the picks,
        notes for the report and the time taken. [s for ``seconds``]
        Files go to the run folder: figures in :data:`FIGURE_FOLDER`, the
        ranking in ``sensitivity.csv``, each further table in its declared
        file, the picks in :data:`PICKS_FILE`, the safe regions in
        :data:`SAFE_REGIONS_FILE`.
    """
    study, folder, tables = outcome.study, Path(outcome.folder), outcome.tables
    art = Artefacts()
    map_dir = folder / FIGURE_FOLDER
    t0 = time.perf_counter()
    grid = tables.get("grid")
    robust = tables.get("robust")
    if grid is not None and len(grid):
        for m in study.analyses.maps:
            paths, csv = maps.regime_map(study, grid, m.x, m.y, map_dir, m.formats)
            art.maps.append((f"{m.y} against {m.x}", paths, csv))
        for c in study.analyses.curves:
            paths, csv = maps.curve(study, grid, c.x, map_dir, c.formats)
            art.curves.append((f"metric against {c.x}", paths, csv))
    tolerated = robust is not None and len(robust) > 0
    if tolerated:
        cells = judged_cells(study, robust, grid)
        if study.analyses.picks is not None:
            art.picks = make_picks(study, robust, grid, cells)
            # the same picks keep their file's time: a rig plan made from them stays current
            write_csv(art.picks, folder / PICKS_FILE, keep_same=True)
        x, y = _robustness_axes(study)
        art.safe_regions = safe_regions(cells, study.gridded(), x=x)
        write_csv(art.safe_regions, folder / SAFE_REGIONS_FILE)
        if study.analyses.robustness:
            paths, csv = robustness(study, cells, x, y, map_dir, art.picks)
            art.robustness.append((f"robustness over {x}" + (f" and {y}" if y else ""), paths, csv))
    art.seconds["plotting"] = time.perf_counter() - t0
    t1 = time.perf_counter()
    if outcome.plan is not None:
        _sensitivity(outcome, art, folder, map_dir)
    art.seconds["analysis"] = time.perf_counter() - t1
    art.headline = headline(study, tables)
    if grid is not None and len(grid):
        note = inside_floor_note(study, grid)
        if note:
            art.notes.insert(0, note)
    return art


def inside_floor_note(study, grid):
    """Where on the grid drops would start inside the floor, in one sentence (None if nowhere).

    The place is the smallest box of grid values holding every such drop,
    named by the swept quantities it narrows; the share counts the drops
    inside that box, so it reads as "at these settings, this many".

    Parameters
    ----------
    study : Study
        The validated study (its swept quantities).
    grid : pandas.DataFrame
        The grid stage's result table (``status`` column, grid values).

    Returns
    -------
    str or None
        E.g. ``12% of the drops at aspect ratio 5-8 and height 0.002-0.006 m
        (1,234 of 10,240) start inside the floor and were not simulated; ...``
    """
    inside = (grid["status"].astype(str) == "inside floor").to_numpy()
    if not inside.any():
        return None
    box = np.ones(len(grid), bool)
    words = []
    for name in study.gridded():
        values = grid[COLUMN[name]].to_numpy(dtype=float)
        low, high = values[inside].min(), values[inside].max()
        if low > values.min() or high < values.max():
            box &= (values >= low) & (values <= high)
            words.append(quantity_range_words(name, low, high))
    where = " and ".join(words) if words else "every grid setting"
    count, total = int(inside.sum()), int(box.sum())
    return (f"{count / total:.0%} of the drops at {where} ({count:,} of {total:,}) start inside the floor and "
            f"were not simulated; map cells where more than half do are drawn grey, and probabilities count "
            f"the simulated drops only.")


def _robustness_axes(study):
    """The robustness map's axes: the first regime map's, else the first two grid quantities."""
    if study.analyses.maps:
        return study.analyses.maps[0].x, study.analyses.maps[0].y
    g = study.gridded()
    return g[0], (g[1] if len(g) > 1 else None)


def headline(study, tables):
    """One sentence when the event never or always happened in the whole study, else None.

    Parameters
    ----------
    study : Study
        The validated study (its metric's words).
    tables : dict of str to pandas.DataFrame
        Every stage's result table (``event`` column); drops that would
        start inside the floor are left out.

    Returns
    -------
    str or None
    """
    events = []
    for stage in tables:
        t = stage_columns(tables, stage, ["status", "event"])
        if len(t):
            events.append(t.loc[t["status"].astype(str) != "inside floor", "event"].to_numpy(bool))
    events = np.concatenate(events) if events else np.zeros(0, bool)
    if not events.size or 0 < events.sum() < events.size:
        return None
    _, event_words = maps.metric_words(study)
    how = "never" if not events.any() else "always"
    return (f"In all {events.size:,} drops of this study the event ({event_words}) {how} happened, so every map "
            f"and pick below is flat: widen the ranges or change the threshold to find where it "
            f"{'starts' if how == 'never' else 'stops'}.")
