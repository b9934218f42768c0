"""What a sensitivity method declares: one :class:`Method` per method module."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable


@dataclass(frozen=True)
class Table:
    """A table a method's analysis gives besides the ranking.

    Parameters
    ----------
    key : str
        Its key in the dict :attr:`Method.analyse` returns.
    file : str
        CSV file it is written to, in the run folder.
    columns : tuple of str
        Its columns, in order.
    words : str
        How to read it, for the report (shown when the table is written).
    """

    key: str
    file: str
    columns: tuple
    words: str


@dataclass(frozen=True)
class Picture:
    """A chart a method draws from one of its tables.

    Parameters
    ----------
    file : str
        Image file name, written in the run's figure folder.
    table : str
        Key of the table it shows (``"ranking"`` or a :class:`Table` key).
    draw : callable
        ``draw(table, path, study_name)`` writes the image to ``path``.
        Imports matplotlib only when called, so that planning stays free
        of plotting.
    """

    file: str
    table: str
    draw: Callable


@dataclass(frozen=True)
class Method:
    """One sensitivity method, everything the pipeline needs of it.

    Parameters
    ----------
    name : str
        Its key in :data:`explore.sensitivity.METHODS`, the study file's
        ``analyses.sensitivity.method`` and the name of its stage of drops.
    stream : int
        Number of its stage's random stream in the planner
        (:mod:`explore.plan`), unique, > 2 (1 and 2 are the grid and
        robust stages). Never change it once given: it fixes the draws of
        every study that uses the method.
    title : str
        Its name in the report's heading (``Sobol indices``).
    plan_type : type
        Class of its plans; a plan's ``method`` attribute is ``name``.
    make_plan : callable
        ``make_plan(names, settings, seed)``: the plan for these parameter
        names from the study's ``analyses.sensitivity`` settings (samples,
        second_order, levels) and the run's seed.
    count_rows : callable
        ``count_rows(settings, dimension)``: rows ``make_plan`` would give
        for ``dimension`` parameters, without sampling. [-]
    analyse : callable
        ``analyse(plan, y)``: dict with the ranking table under
        ``"ranking"`` (columns ``columns``, one row per parameter, a
        ``rank`` column) and each of ``tables`` under its key (None when
        these settings give none).
    ranking_column : str
        The ranking table's column that ``rank`` orders, largest first.
    columns : tuple of str
        The ranking table's columns, in order.
    words : str
        How to read the ranking table, for the report.
    tables : tuple of Table, optional
        Further tables the analysis writes.
    pictures : tuple of Picture, optional
        Charts the analysis draws.
    settings_problem : callable, optional
        ``settings_problem(settings)``: what is wrong with the study's
        ``analyses.sensitivity`` settings for this method (a message), or
        None; the study file reports it at ``analyses.sensitivity``.
    """

    name: str
    stream: int
    title: str
    plan_type: type
    make_plan: Callable
    count_rows: Callable
    analyse: Callable
    ranking_column: str
    columns: tuple
    words: str
    tables: tuple = ()
    pictures: tuple = ()
    settings_problem: Callable = staticmethod(lambda settings: None)
