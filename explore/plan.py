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
one per sensitivity method (``sobol``, ``morris``: ``explore.sensitivity.METHODS``)
    The sensitivity sample: gridded quantities count as uniform over their
    range, distributed ones keep their distribution.
"""
from __future__ import annotations

import typing

import numpy as np

if typing.TYPE_CHECKING:   # pandas is imported where tables are built: `check` needs none
    import pandas as pd

from .distributions import Distribution
from .sensitivity import METHODS, plan_values
from .quantities import radians_within_one_turn
from .study import COLUMN, QUANTITIES, Study, grid_cells

#: Random stream of each stage: fixed numbers, the sensitivity methods' from
#: their declarations, so adding a method changes no earlier study's draws.
_STREAM = {"grid": 1, "robust": 2, **{name: method.stream for name, method in METHODS.items()}}
STAGES = tuple(_STREAM)


def distribution(name, q, allowed=None) -> Distribution:
    """The distribution a quantity is drawn from (a grid counts as uniform).

    Parameters
    ----------
    name : str
        The quantity's name (a key of ``explore.study.QUANTITIES``).
    q : explore.study.Quantity
        Its validated setting: a grid or a distribution.
    allowed : sim.limits.Interval, optional
        The range a normal is truncated to (:meth:`Study.allowed`: the
        quantity's range and the body's own); the quantity's range if None.

    Returns
    -------
    Distribution
        Uniform over a grid's range; a normal is truncated to the range the
        quantity allows. [unit of the quantity]

    Raises
    ------
    ValueError
        For a fixed quantity, which has no distribution.
    """
    allowed = QUANTITIES[name].allowed if allowed is None else allowed
    low, high = allowed.low, allowed.high
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
    """Values of each gridded quantity, in the study's order.

    Parameters
    ----------
    study : Study

    Returns
    -------
    dict of str to numpy.ndarray
        For each gridded quantity, its ``steps`` evenly spaced values from
        ``low`` to ``high``. [unit of the quantity]
    """
    return {name: np.linspace(study.quantity(name).grid.low, study.quantity(name).grid.high,
                              study.quantity(name).grid.steps) for name in study.gridded()}


def cell_coordinates(study: Study) -> pd.DataFrame:
    """Nominal value of every gridded quantity per grid cell.

    Parameters
    ----------
    study : Study

    Returns
    -------
    pandas.DataFrame
        Column ``cell`` (0, 1, ...; the last gridded quantity varies
        fastest) and one column per gridded quantity.
        [units of the columns' names]
    """
    import pandas as pd
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
            out[COLUMN[name]] = distribution(name, q, study.allowed(name)).ppf(rng.random(n))
    return out


def grid_frame(study: Study) -> pd.DataFrame:
    """Input table of the grid stage: every grid cell times the draws.

    Parameters
    ----------
    study : Study
        Its grid, distributions, ``analyses.draws`` and seed are used.

    Returns
    -------
    pandas.DataFrame
        Columns ``cell``, ``draw`` and one per quantity: the cell's grid
        values, fixed values, and ``analyses.draws`` draws of the
        distributed quantities per cell (one draw when nothing is
        distributed), from the grid stage's own random stream.
        [units of the columns' names]
    """
    import pandas as pd
    return pd.DataFrame(grid_columns(study))


def grid_columns(study: Study):
    """The columns of :func:`grid_frame` as NumPy arrays (no table built)."""
    axes = grid_axes(study)
    draws = study.analyses.draws if study.random() else 1
    mesh = np.meshgrid(*axes.values(), indexing="ij") if axes else []
    cells = grid_cells(study)
    cell = np.repeat(np.arange(cells), draws)
    values = {name: np.repeat(m.ravel(), draws) for name, m in zip(axes, mesh)}
    frame = {"cell": cell, "draw": np.tile(np.arange(draws), cells)}
    frame.update(_fill(study, cell.size, _rng(study, "grid"), values))
    return frame


def robust_frame(study: Study, grid: pd.DataFrame) -> pd.DataFrame:
    """Toleranced re-drops of every grid cell, paired with grid drops.

    Draw ``j`` of a cell copies grid drop ``j mod draws`` of that cell (same
    restitution, friction, ... : common random numbers) and moves its
    release angle, height and spin by uniform errors within the tolerance,
    so the change of the metric between the pair is due to the release
    error alone. ``pair`` is the row of the partner in the grid table.

    Parameters
    ----------
    study : Study
    grid : pandas.DataFrame
        The grid stage's table (:func:`grid_frame`).

    Returns
    -------
    pandas.DataFrame
        ``tolerance.draws`` rows per cell, the grid table's columns plus
        ``pair``; heights are kept at or above the smallest allowed height.
        [units of the columns' names]
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
    """The plan of the study's sensitivity analysis.

    Parameters
    ----------
    study : Study
        A validated study.

    Returns
    -------
    plan or None
        The plan its method (``analyses.sensitivity.method``, a key of
        ``explore.sensitivity.METHODS``) makes over the varying quantities
        with the run's seed; its ``method`` attribute names the method.
        None when the study asks for no sensitivity analysis.
    """
    sens = study.analyses.sensitivity
    if sens is None:
        return None
    return METHODS[sens.method].make_plan(tuple(study.varying()), sens, study.run.seed)


def sensitivity_frame(study: Study, plan) -> pd.DataFrame:
    """Input table of a sensitivity plan's drops.

    Parameters
    ----------
    study : Study
        The study the plan was made for.
    plan : object
        A plan of :func:`sensitivity_plan`.

    Returns
    -------
    pandas.DataFrame
        One row per plan row, in plan order: ``sample`` (the row number)
        and a column per quantity (plan values for the varying ones, the
        fixed values for the rest). [units of the columns' names]
    """
    import pandas as pd
    dists = {name: distribution(name, study.quantity(name), study.allowed(name)) for name in plan.names}
    values = plan_values(plan, dists)
    frame = {"sample": np.arange(plan.rows)}
    frame.update(_fill(study, plan.rows, _rng(study, plan.method), values))
    return pd.DataFrame(frame)


def build_stages(study: Study):
    """Every stage's input table, and the sensitivity plan.

    Parameters
    ----------
    study : Study

    Returns
    -------
    stages : dict of str to pandas.DataFrame
        Input tables keyed by stage name (see the module docstring); a
        study with nothing gridded and no sensitivity analysis gets one
        ``grid`` table of its draws.
    plan : object or None
        The sensitivity plan (:func:`sensitivity_plan`), None without one.
    """
    import pandas as pd
    stages = {}
    if study.gridded():
        stages["grid"] = grid_frame(study)
    if study.gridded() and (study.analyses.robustness or study.analyses.picks is not None):
        stages["robust"] = robust_frame(study, stages["grid"])
    plan = sensitivity_plan(study)
    if plan is not None:
        stages[plan.method] = sensitivity_frame(study, plan)
    if not stages:
        # nothing gridded and no sensitivity: one drop per draw of the study
        n = study.analyses.draws if study.random() else 1
        frame = {"cell": np.zeros(n, dtype=np.int64), "draw": np.arange(n)}
        frame.update(_fill(study, n, _rng(study, "grid"), {}))
        stages["grid"] = pd.DataFrame(frame)
    return stages, plan


def inside_floor(study: Study, frame):
    """Which rows of a stage table (a DataFrame or a dict of columns) start
    touching or inside the floor (they are not simulated): the centre no
    higher than the lowest point's depth below it. A height given to the
    lowest point never is.

    Returns
    -------
    numpy.ndarray of bool
    """
    def column(name):
        return np.asarray(frame[COLUMN[name]]) if COLUMN[name] in frame else None

    if study.release.height_of == "bottom":
        return np.zeros(len(column("height")), bool)

    shape = study.body.make_shape(column("diameter"), column("density"), aspect_ratio=column("aspect_ratio"),
                                  length=column("length"))
    return column("height") - shape.depth(radians_within_one_turn(column("angle"))) <= 0


#: Peak memory of a run beyond its tables (the interpreter, NumPy, pandas,
#: matplotlib and the kernel's working memory): measured ~300 MB. [bytes]
BASE_MEMORY = 300e6


def resource_estimate(study: Study, counts):
    """Memory and disk a run of ``study`` needs, before anything is allocated.

    A result row holds one 8-byte number per column: the stage, cell and
    draw, every quantity, one ratio per impact and nine metric columns
    (measured on ``quick``: 203 bytes per drop in memory, 114 on disk as
    Parquet, against 240 estimated). The analysis holds the tables about
    three times over at its peak (copies in grouping and joining).

    Parameters
    ----------
    study : Study
    counts : dict of str to int
        Drops per stage (:func:`count_drops`).

    Returns
    -------
    dict
        ``memory`` and ``disk`` [bytes].
    """
    columns = 3 + len(study.quantities()) + study.run.impacts + 9
    table = sum(counts.values()) * 8 * columns
    return {"memory": 3 * table + BASE_MEMORY, "disk": 0.6 * table}


def count_drops(study: Study):
    """Drops per stage without building the tables (for ``hopscape check``).

    Parameters
    ----------
    study : Study

    Returns
    -------
    dict of str to int
        Rows :func:`build_stages` would give each stage. [-]
    """
    counts = {}
    cells = grid_cells(study)
    if study.gridded():
        counts["grid"] = cells * (study.analyses.draws if study.random() else 1)
        if study.analyses.robustness or study.analyses.picks is not None:
            counts["robust"] = cells * study.tolerance.draws
    sens = study.analyses.sensitivity
    if sens is not None:
        counts[sens.method] = METHODS[sens.method].count_rows(sens, len(study.varying()))
    if not counts:
        counts["grid"] = study.analyses.draws if study.random() else 1
    return counts
