"""From a validated study to the tables of drops each analysis needs.

All random draws are made here, once, from ``SeedSequence(seed)`` with one
child stream per stage, before any simulation. The simulation itself is
deterministic, so the results depend only on the study (and its seed),
never on how the drops are split into chunks, how many jobs run them or on
which backend.

Stages
------
``grid``
    Every grid cell (the product of all gridded quantities) times
    ``analyses.draws`` draws of the distributed quantities (one draw when
    nothing is distributed). Maps and curves come from here.
``robust``
    Every grid cell times ``tolerance.draws`` drops whose release angle,
    height and spin are moved by uniform errors within the stated
    tolerance. The robustness map and the picks come from here.
``sobol`` / ``morris``
    The sensitivity sample: gridded quantities count as uniform over their
    range, distributed ones keep their distribution.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .sensitivity import Distribution, morris_plan, plan_values, sobol_plan
from .study import COLUMN, QUANTITIES, Study, grid_cells

STAGES = ("grid", "robust", "sobol", "morris")
_STREAM = {stage: i + 1 for i, stage in enumerate(STAGES)}


def distribution(name, q) -> Distribution:
    """The distribution a quantity is drawn from (a grid counts as uniform)."""
    low, high = QUANTITIES[name].allowed.low, QUANTITIES[name].allowed.high
    if q.grid is not None:
        return Distribution("uniform", low=q.grid.low, high=q.grid.high, mean=None, sd=None)
    if q.uniform is not None:
        return Distribution("uniform", low=q.uniform.low, high=q.uniform.high, mean=None, sd=None)
    if q.log_uniform is not None:
        return Distribution("log_uniform", low=q.log_uniform.low, high=q.log_uniform.high, mean=None, sd=None)
    if q.normal is not None:
        return Distribution("normal", low=low, high=high, mean=q.normal.mean, sd=q.normal.sd)
    raise ValueError(f"{name} is fixed")


def grid_axes(study: Study):
    """Values of each gridded quantity, in the study's order."""
    return {name: np.linspace(study.quantity(name).grid.low, study.quantity(name).grid.high,
                              study.quantity(name).grid.steps) for name in study.gridded()}


def cell_coordinates(study: Study) -> pd.DataFrame:
    """Nominal value of every gridded quantity per grid cell (``cell`` index)."""
    axes = grid_axes(study)
    mesh = np.meshgrid(*axes.values(), indexing="ij") if axes else []
    frame = {"cell": np.arange(grid_cells(study))}
    frame.update({COLUMN[name]: m.ravel() for name, m in zip(axes, mesh)})
    return pd.DataFrame(frame)


def _rng(study, stage):
    return np.random.default_rng(np.random.SeedSequence([study.run.seed, _STREAM[stage]]))


def _fill(study, n, rng, values):
    """Columns for every quantity: given values, fixed ones, then draws."""
    out = {}
    for name, q in study.quantities().items():
        if name in values:
            out[COLUMN[name]] = np.asarray(values[name], dtype=float)
        elif q.kind == "fixed":
            out[COLUMN[name]] = np.full(n, q.value)
        elif q.kind != "grid":
            out[COLUMN[name]] = distribution(name, q).ppf(rng.random(n))
    return out


def grid_frame(study: Study) -> pd.DataFrame:
    axes = grid_axes(study)
    draws = study.analyses.draws if study.random() else 1
    mesh = np.meshgrid(*axes.values(), indexing="ij") if axes else []
    cells = grid_cells(study)
    cell = np.repeat(np.arange(cells), draws)
    values = {name: np.repeat(m.ravel(), draws) for name, m in zip(axes, mesh)}
    frame = {"cell": cell, "draw": np.tile(np.arange(draws), cells)}
    frame.update(_fill(study, cell.size, _rng(study, "grid"), values))
    return pd.DataFrame(frame)


def robust_frame(study: Study, grid: pd.DataFrame) -> pd.DataFrame:
    """Toleranced re-drops of every grid cell, paired with grid drops.

    Draw ``j`` of a cell copies grid drop ``j mod draws`` of that cell (same
    restitution, friction, ... : common random numbers) and moves its
    release angle, height and spin by uniform errors within the tolerance,
    so the change of the metric between the pair is due to the release
    error alone. ``pair`` is the row of the partner in the grid table.
    """
    tol = study.tolerance
    draws = tol.draws
    per_cell = int(grid["draw"].max()) + 1
    cells = grid_cells(study)
    cell = np.repeat(np.arange(cells), draws)
    pair = cell * per_cell + np.tile(np.arange(draws) % per_cell, cells)
    frame = grid.iloc[pair].reset_index(drop=True).copy()
    frame["draw"] = np.tile(np.arange(draws), cells)
    frame["pair"] = pair
    rng = _rng(study, "robust")
    for name, half in (("angle", tol.angle), ("height", tol.height), ("spin", tol.spin)):
        col = COLUMN[name]
        if half > 0:
            frame[col] = frame[col] + rng.uniform(-half, half, len(frame))
    frame[COLUMN["height"]] = np.maximum(frame[COLUMN["height"]], QUANTITIES["height"].allowed.low)
    return frame


def sensitivity_plan(study: Study):
    """The SALib plan for the study's sensitivity analysis (or None)."""
    sens = study.analyses.sensitivity
    if sens is None:
        return None
    names = tuple(study.varying())
    seed = study.run.seed
    if sens.method == "sobol":
        return sobol_plan(names, sens.samples, second_order=sens.second_order, seed=seed)
    return morris_plan(names, trajectories=sens.samples, levels=sens.levels, seed=seed)


def sensitivity_frame(study: Study, plan) -> pd.DataFrame:
    dists = {name: distribution(name, study.quantity(name)) for name in plan.names}
    values = plan_values(plan, dists)
    rows = len(next(iter(values.values())))
    frame = {"sample": np.arange(rows)}
    frame.update(_fill(study, rows, _rng(study, study.analyses.sensitivity.method), values))
    return pd.DataFrame(frame)


def build_stages(study: Study):
    """Every stage's input table, keyed by stage name, and the SALib plan."""
    stages = {}
    if study.gridded():
        stages["grid"] = grid_frame(study)
    if study.gridded() and (study.analyses.robustness or study.analyses.picks is not None):
        stages["robust"] = robust_frame(study, stages["grid"])
    plan = sensitivity_plan(study)
    if plan is not None:
        stages[study.analyses.sensitivity.method] = sensitivity_frame(study, plan)
    if not stages:
        # nothing gridded and no sensitivity: one drop per draw of the study
        n = study.analyses.draws if study.random() else 1
        frame = {"cell": np.zeros(n, dtype=np.int64), "draw": np.arange(n)}
        frame.update(_fill(study, n, _rng(study, "grid"), {}))
        stages["grid"] = pd.DataFrame(frame)
    return stages, plan


def count_drops(study: Study):
    """Drops per stage without building the tables (for ``hopscape check``)."""
    counts = {}
    cells = grid_cells(study)
    if study.gridded():
        counts["grid"] = cells * (study.analyses.draws if study.random() else 1)
        if study.analyses.robustness or study.analyses.picks is not None:
            counts["robust"] = cells * study.tolerance.draws
    sens = study.analyses.sensitivity
    if sens is not None:
        d = len(study.varying())
        if sens.method == "sobol":
            counts["sobol"] = sens.samples * ((2 * d + 2) if sens.second_order else (d + 2))
        else:
            counts["morris"] = sens.samples * (d + 1)
    if not counts:
        counts["grid"] = study.analyses.draws if study.random() else 1
    return counts
