"""All analyses of a finished run: maps, curves, robustness, ranking, picks."""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import maps, sensitivity
from .picks import picks as make_picks
from .runner import RunOutcome


@dataclass
class Artefacts:
    maps: list = field(default_factory=list)        # (title, [image paths], csv path)
    curves: list = field(default_factory=list)
    robustness: list = field(default_factory=list)
    ranking: pd.DataFrame | None = None
    second_order: pd.DataFrame | None = None
    convergence: pd.DataFrame | None = None
    ranking_charts: list = field(default_factory=list)
    picks: pd.DataFrame | None = None
    notes: list = field(default_factory=list)
    seconds: dict = field(default_factory=dict)


def analyse(outcome: RunOutcome) -> Artefacts:
    study, folder, tables = outcome.study, Path(outcome.folder), outcome.tables
    art = Artefacts()
    map_dir = folder / "maps"
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
    if robust is not None and len(robust) and study.analyses.robustness:
        if study.analyses.maps:
            x, y = study.analyses.maps[0].x, study.analyses.maps[0].y
        else:
            g = study.gridded()
            x, y = g[0], (g[1] if len(g) > 1 else None)
        paths, csv = maps.robustness(study, robust, grid, x, y, map_dir)
        art.robustness.append((f"robustness over {x}" + (f" and {y}" if y else ""), paths, csv))
    art.seconds["plotting"] = time.perf_counter() - t0
    t1 = time.perf_counter()
    plan = outcome.plan
    if plan is not None:
        method = study.analyses.sensitivity.method
        table = tables[method].sort_values("sample")
        y = table["value"].to_numpy(dtype=float)
        missing = int(np.isnan(y).sum())
        if missing:
            art.notes.append(f"{missing} sensitivity drop(s) would start inside the floor; they count as "
                             "no rebound (metric 0) in the ranking.")
            y = np.nan_to_num(y, nan=0.0)
        if method == "sobol":
            ranked = sensitivity.sobol_analyze(plan, y)
            if isinstance(ranked, tuple):
                ranked, art.second_order = ranked
            art.convergence = sensitivity.sobol_convergence(plan, y, full=ranked)
        else:
            ranked = sensitivity.morris_analyze(plan, y)
        art.ranking = ranked.sort_values("rank").reset_index(drop=True)
        ranked = art.ranking
        ranked.to_csv(folder / "sensitivity.csv", index=False)
        if art.second_order is not None:
            art.second_order.to_csv(folder / "sensitivity-second-order.csv", index=False)
        if method == "sobol":
            chart = folder / "maps" / "ranking.png"
            chart.parent.mkdir(parents=True, exist_ok=True)
            sensitivity.ranking_chart(ranked, chart, title=f"{study.name}: which quantities matter")
            art.ranking_charts.append(chart)
            if art.convergence is not None and len(art.convergence):
                conv = folder / "maps" / "ranking-convergence.png"
                art.convergence.to_csv(folder / "sensitivity-convergence.csv", index=False)
                sensitivity.convergence_chart(art.convergence, conv)
                art.ranking_charts.append(conv)
    art.seconds["analysis"] = time.perf_counter() - t1
    if robust is not None and len(robust) and (study.analyses.picks is not None):
        art.picks = make_picks(study, robust, grid)
        art.picks.to_csv(folder / "picks.csv", index=False)
    return art
