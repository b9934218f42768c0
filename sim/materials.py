"""Materials as data: elastic constants, density and a strength figure.

The table is ``sim/data/materials.csv`` (package data), one row per
material with a ``source`` for every number (docs/physics.md section 8):
a publication where one was read, otherwise "common practice / from
memory". Users name a material by its ``name`` or give the modulus and
Poisson's ratio directly (:func:`elastic_pair`).
"""
from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from .limits import Interval

#: Young's modulus the contact model takes (a soft foam to diamond). [Pa]
MODULUS = Interval(0.0, math.inf, closed="neither", unit="Pa")
#: Poisson's ratio of an isotropic elastic solid (thermodynamic bounds).
POISSON = Interval(-1.0, 0.5, unit="-")

TABLE = Path(__file__).with_name("data") / "materials.csv"


@dataclass(frozen=True)
class Material:
    """One row of the materials table.

    Parameters
    ----------
    name : str
        As users write it (``steel``, ``mcc_tablet``).
    youngs_modulus : float
        [Pa]
    poisson : float
        Poisson's ratio. [-]
    density : float
        [kg/m^3]
    strength : float
        A strength figure useful for screening, NaN where none is given. [Pa]
    strength_kind : str
        What that figure is (tensile, flexural, ...).
    description, source : str
        What the row stands for; where each number comes from.
    """

    name: str
    youngs_modulus: float
    poisson: float
    density: float
    strength: float
    strength_kind: str
    description: str
    source: str


@lru_cache(maxsize=1)
def materials():
    """Every material of the table, by name (read once). Raises ValueError
    naming the row of a number outside its range."""
    table = {}
    with open(TABLE, newline="", encoding="utf-8") as handle:
        for line, row in enumerate(csv.DictReader(handle), start=2):
            where = f"{TABLE.name}:{line}"
            try:
                material = Material(
                    name=row["name"], youngs_modulus=MODULUS.check("youngs_modulus", float(row["youngs_modulus"])),
                    poisson=POISSON.check("poisson", float(row["poisson"])), density=float(row["density"]),
                    strength=float(row["strength"]) if row["strength"] else math.nan,
                    strength_kind=row["strength_kind"], description=row["description"], source=row["source"])
            except ValueError as exc:
                raise ValueError(f"{where}: {exc}") from None
            if not material.source.strip():
                raise ValueError(f"{where}: source is empty; every number needs one")
            table[material.name] = material
    return table


def material(name):
    """The :class:`Material` called ``name``; ValueError listing the known
    names otherwise."""
    known = materials()
    if name not in known:
        raise ValueError(f"material must be one of {', '.join(known)}, got {name!r}")
    return known[name]


def elastic_pair(name=None, modulus=None, poisson=None, who="body"):
    """Young's modulus [Pa] and Poisson's ratio [-] from a material name or
    given directly (a given number overrides the named material's).

    Returns ``(nan, nan)`` when neither is given. ``who`` names the side in
    messages (``body``, ``floor``).
    """
    if name is not None:
        found = material(name)
        modulus = found.youngs_modulus if modulus is None else modulus
        poisson = found.poisson if poisson is None else poisson
    if modulus is None and poisson is None:
        return math.nan, math.nan
    if modulus is None:
        raise ValueError(f"{who}_poisson is given without {who}_modulus or {who}_material")
    if poisson is None:
        raise ValueError(f"{who}_modulus is given without {who}_poisson or {who}_material")
    return float(MODULUS.check(f"{who}_modulus", modulus)), float(POISSON.check(f"{who}_poisson", poisson))


def effective_modulus(modulus_1, poisson_1, modulus_2, poisson_2):
    """Hertz's contact modulus ``E*``: ``1/E* = (1 - nu1^2)/E1 + (1 - nu2^2)/E2``. [Pa]

    References
    ----------
    K. L. Johnson, *Contact Mechanics*, Cambridge University Press 1985,
    ch. 4 (docs/physics.md section 7).
    """
    return 1.0 / ((1 - np.square(poisson_1)) / modulus_1 + (1 - np.square(poisson_2)) / modulus_2)
