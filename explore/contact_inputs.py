"""Materials and contact settings from the user's edge (batch columns,
``hopscape drop`` options), to the per-drop numbers :mod:`sim.contact_load`
takes: Hertz's effective modulus, a sharp rim's edge radius and the
breakage screen's parameters.

Each side (``body``, ``floor``) is a material name of
:mod:`sim.materials`, or its modulus and Poisson's ratio, or a name with
either number overriding the table. Neither side given: no contact
outputs (NaN), since no material is assumed. One side only: an error.
"""
from __future__ import annotations

import numpy as np

from hopscape.sim.limits import F_MAT, POSITIVE_SIZE, W_MIN, number_text
from hopscape.sim.materials import MODULUS, POISSON, effective_modulus, materials


SIDES = ("body", "floor")

CONTACT_NUMBERS = ("body_modulus", "body_poisson", "floor_modulus", "floor_poisson", "rim_edge_radius",
                   "breakage_f_mat", "breakage_w_min")
_RANGES = {"body_modulus": MODULUS, "floor_modulus": MODULUS, "body_poisson": POISSON, "floor_poisson": POISSON,
           "rim_edge_radius": POSITIVE_SIZE, "breakage_f_mat": F_MAT, "breakage_w_min": W_MIN}


def known_materials():
    """``steel, stainless_steel, ...`` for messages."""
    return ", ".join(materials())


def side_elastic(names, modulus, poisson, side, flag):
    """Per-row modulus and Poisson's ratio of one side (NaN: not given).

    ``names``: material names ('' for none); ``modulus``, ``poisson``:
    numbers (NaN for none); ``flag(bad, message_of_row)`` records row errors.
    """
    table = materials()
    names = np.asarray(names, dtype=object)
    known = np.isin(names, list(table))
    flag((names != "") & ~known, lambda i: f"{side}_material must be one of {known_materials()}, got {names[i]!r}")
    # a lookup per distinct name, not per row
    distinct, inverse = np.unique(names.astype(str), return_inverse=True)
    table_modulus = np.array([table[k].youngs_modulus if k in table else np.nan for k in distinct])[inverse]
    table_poisson = np.array([table[k].poisson if k in table else np.nan for k in distinct])[inverse]
    e = np.where(np.isnan(modulus), table_modulus, modulus)
    nu = np.where(np.isnan(poisson), table_poisson, poisson)
    flag(np.isnan(e) != np.isnan(nu), lambda i: f"{side}_{'poisson' if np.isnan(nu[i]) else 'modulus'} is missing: "
         f"give {side}_material or both {side}_modulus and {side}_poisson")
    return e, nu


def contact_settings(frame, flag):
    """Per row of a batch table: ``E*`` [Pa] (NaN: no materials), the rim
    edge radius [m] (NaN: the default) and the breakage parameters (NaN:
    none). ``flag`` records row errors as in :func:`side_elastic`."""
    import pandas as pd  # here: a study file's checks need no pandas

    n = len(frame)

    def numbers(column):
        if column not in frame:
            return np.full(n, np.nan)
        values = pd.to_numeric(frame[column], errors="coerce").to_numpy(dtype=float)
        raw = frame[column].to_numpy()
        given = pd.notna(frame[column]).to_numpy()
        flag(given & np.isnan(values), lambda i: f"{column} must be a number, got {raw[i]!r}")
        return values

    def names(column):
        if column not in frame:
            return np.full(n, "", dtype=object)
        column = frame[column].astype(object)
        return column.where(column.notna(), "").astype(str).str.strip().str.lower().to_numpy(dtype=object)

    values = {column: numbers(column) for column in CONTACT_NUMBERS}
    return _settings({side: names(f"{side}_material") for side in SIDES}, values, flag)


def _settings(material_names, values, flag):
    """:func:`contact_settings` from per-row arrays: material names by side
    and the numbers of :data:`CONTACT_NUMBERS` (NaN: not given)."""
    for column in CONTACT_NUMBERS:
        v = values[column]
        flag(~np.isnan(v) & ~_RANGES[column].contains(v),
             lambda i, c=column, v=v: f"{c} must be {_RANGES[c].describe()}, got {number_text(v[i])}")
    sides = {side: side_elastic(material_names[side], values[f"{side}_modulus"], values[f"{side}_poisson"],
                                side, flag) for side in SIDES}
    body_given, floor_given = (~np.isnan(sides[s][0]) for s in SIDES)
    flag(body_given != floor_given, lambda i: f"{'floor' if body_given[i] else 'body'}_material (or its modulus and "
         "poisson) is missing: the contact model needs both sides")
    with np.errstate(invalid="ignore"):
        e_star = effective_modulus(*sides["body"], *sides["floor"])
    f_mat, w_min = values["breakage_f_mat"], values["breakage_w_min"]
    flag(np.isnan(f_mat) != np.isnan(w_min), lambda i: "breakage_f_mat and breakage_w_min go together: give both")
    return e_star, values["rim_edge_radius"], (f_mat, w_min)


def single_settings(values):
    """:func:`contact_settings` for one drop from a dict of the same names
    (None for not given); raises ValueError with the first problem."""
    problems = []

    def flag(bad, message):
        for i in np.flatnonzero(np.asarray(bad, dtype=bool)):
            problems.append(message(i))
    names = {side: np.array([(values.get(f"{side}_material") or "").strip().lower()], dtype=object) for side in SIDES}
    numbers = {column: np.array([np.nan if values.get(column) is None else float(values[column])])
               for column in CONTACT_NUMBERS}
    e_star, edge, (f_mat, w_min) = _settings(names, numbers, flag)
    if problems:
        raise ValueError(problems[0])
    return float(e_star[0]), float(edge[0]), (float(f_mat[0]), float(w_min[0]))
