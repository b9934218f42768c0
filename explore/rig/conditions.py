"""The drop conditions a rig plan is made for: a study's picks (its run's
``picks.csv``) or values given on the command line, each turned into the
study with its swept quantities fixed there."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from hopscape.sim.limits import number_text

from ..errors import InputError, shown
from ..study import COLUMN, QUANTITIES, Quantity, Study


def at_condition(study: Study, values) -> Study:
    """The study with the named quantities fixed at ``values``.

    Parameters
    ----------
    study : Study
    values : dict of str to float
        Quantity name -> value, in the study file's units (``angle`` [deg]).

    Returns
    -------
    Study
        A copy; the quantities not named keep their setting (a distribution
        stays a distribution: the rig's part-to-part scatter).
    """
    sections = {}
    for name, value in values.items():
        section = QUANTITIES[name].section
        current = sections.get(section, getattr(study, section))
        sections[section] = current.model_copy(update={name: Quantity(value=float(value))})
    return study.model_copy(update=sections)


def parse_at(text, study: Study):
    """``--at angle=30,height=0.005`` -> ``{"angle": 30.0, "height": 0.005}``.

    Raises
    ------
    InputError
        One line naming the quantity, its allowed range and the value
        given; or the swept quantities left without a value.
    """
    values = {}
    for part in filter(None, (p.strip() for p in text.split(","))):
        name, sep, number = part.partition("=")
        name = name.strip()
        if not sep:
            raise InputError(f"--at: {shown(part)} is not NAME=VALUE (e.g. --at angle=30,height=0.005)")
        if name not in QUANTITIES:
            raise InputError(f"--at: unknown quantity {shown(name)}; known: {', '.join(QUANTITIES)}")
        try:
            value = float(number)
        except ValueError:
            raise InputError(f"--at: {name} must be a number, got {shown(number.strip())}") from None
        allowed = study.allowed(name)
        if not (np.isfinite(value) and allowed.contains(value)):
            raise InputError(f"--at: {name} must be {allowed.describe()} [{QUANTITIES[name].unit}], "
                             f"got {number_text(value)}")
        values[name] = value
    missing = [name for name in study.gridded() if name not in values]
    if missing:
        raise InputError(f"--at: give a value for {', '.join(missing)} (swept in the study), e.g. "
                         f"--at {missing[0]}={study.quantity(missing[0]).grid.low:g}")
    return values


def read_picks(run_folder: Path, study: Study):
    """The study's picks from its run (``picks.csv``), best first.

    Returns
    -------
    list of dict
        Per pick: ``rank``, ``values`` (swept quantity -> value) and
        ``goal_probability`` (under the study's tolerance, from the run) [-].

    Raises
    ------
    InputError
        When the run has no picks (the message says how to make them).
    """
    import pandas as pd

    path = Path(run_folder) / "picks.csv"
    if not path.is_file():
        raise InputError(f"{path}: no picks yet; run `hopscape run {study.name}` first (its analyses need picks), "
                         "or give the drop condition with --at NAME=VALUE,...")
    frame = pd.read_csv(path)
    missing = [COLUMN[name] for name in study.gridded() if COLUMN[name] not in frame]
    if missing or frame.empty:
        raise InputError(f"{path}: " + (f"column(s) {', '.join(missing)} missing; the run is of another study "
                                         "version: run it again" if missing else "holds no pick"))
    return [{"rank": int(row["rank"]), "values": {name: float(row[COLUMN[name]]) for name in study.gridded()},
             "goal_probability": float(row["goal_probability"])} for _, row in frame.iterrows()]


def condition_words(values):
    """``angle 30 deg, aspect ratio 4.2`` for titles and tables."""
    out = []
    for name, value in values.items():
        unit = QUANTITIES[name].unit
        out.append(f"{name.replace('_', ' ')} {value:.4g}" + ("" if unit == "-" else f" {unit}"))
    return ", ".join(out)
