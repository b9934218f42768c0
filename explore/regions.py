"""Where on the grid a target holds: margins and safe regions in plain words.

The cells of a study's grid form an N-dimensional array (one axis per swept
quantity, values in increasing order). A cell's **margin** is how far, in
grid steps, the nearest cell that fails the target is: the Chebyshev
distance, so a margin of 3 means every setting within 2 grid steps of each
swept quantity still meets it. Nothing is known beyond the swept range, so
the grid's edge counts as a failing neighbour one step outside; failing
cells have margin 0. The **safe regions** are the connected groups of
cells that meet the target (neighbours share a face), described as ranges
a person can read: ``angle 15-85 deg for aspect ratio 4.5-7``.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import ndimage

from .study import COLUMN, QUANTITIES


def as_array(cells: pd.DataFrame, keys, column):
    """One column of a per-cell table as an array with one axis per swept quantity.

    Parameters
    ----------
    cells : pandas.DataFrame
        One row per grid cell, with the grid value of every quantity in
        ``keys`` (columns named as in :data:`explore.study.COLUMN`).
    keys : sequence of str
        The swept quantities, one array axis each, in this order.
    column : str
        The column to place.

    Returns
    -------
    array : numpy.ndarray
        ``array[i, j, ...]`` is the row at the i-th smallest value of
        ``keys[0]``, the j-th of ``keys[1]``, ...
    axes : list of numpy.ndarray
        The sorted grid values of each quantity. [units of the quantities]
    """
    axes = [np.sort(cells[COLUMN[k]].unique()) for k in keys]
    index = tuple(np.searchsorted(axis, cells[COLUMN[k]].to_numpy()) for axis, k in zip(axes, keys))
    array = np.zeros([len(a) for a in axes], dtype=cells[column].to_numpy().dtype)
    array[index] = cells[column].to_numpy()
    return array, axes


def margins(ok: np.ndarray):
    """Grid steps from each cell to the nearest cell that fails (Chebyshev).

    Parameters
    ----------
    ok : numpy.ndarray of bool
        Whether each cell meets the target, one axis per swept quantity.

    Returns
    -------
    steps : numpy.ndarray of int
        0 for failing cells; for the others the Chebyshev distance in grid
        steps to the nearest failing cell, the grid's edge counting as
        failing cells one step outside it. [grid steps]
    nearest : numpy.ndarray of float
        The same distance measured straight (Euclidean, in grid steps),
        which tells apart cells of equal margin: one deep inside a region
        against one along its edge. [grid steps]
    """
    padded = np.pad(np.asarray(ok, bool), 1, constant_values=False)
    inner = tuple(slice(1, -1) for _ in range(padded.ndim))
    steps = ndimage.distance_transform_cdt(padded, metric="chessboard")[inner]
    nearest = ndimage.distance_transform_edt(padded)[inner]
    return steps.astype(int), nearest


def _value(v):
    return f"{v:.4g}"


def quantity_range_words(name, low, high):
    """``angle 15-85 deg``: a quantity's range in words, with its unit."""
    unit = QUANTITIES[name].unit
    span = _value(low) if low == high else f"{_value(low)}-{_value(high)}"
    return f"{name.replace('_', ' ')} {span}" + ("" if unit == "-" else f" {unit}")


def _strips(region, x):
    """Runs of cells along axis ``x`` inside ``region``: (other index, start, stop)."""
    moved = np.moveaxis(region, x, -1)
    for other in np.ndindex(moved.shape[:-1]):
        line = moved[other].astype(np.int8)
        edges = np.flatnonzero(np.diff(np.concatenate(([0], line, [0]))))
        for start, stop in zip(edges[::2], edges[1::2] - 1):
            yield other, int(start), int(stop)


def _largest_block(region):
    """Largest axis-aligned rectangle of a 2-D region: (rows, cols) index ranges, or None."""
    best, found = 0, None
    for top in range(region.shape[0]):
        column = np.ones(region.shape[1], bool)
        for bottom in range(top, region.shape[0]):
            column &= region[bottom]
            if not column.any():
                break
            for _, start, stop in _strips(column[None, :], 1):
                area = (bottom - top + 1) * (stop - start + 1)
                if area > best:
                    best, found = area, ((top, bottom), (start, stop))
    return found


def safe_regions(cells: pd.DataFrame, keys, ok_column="meets_target", x=None):
    """The connected regions of the grid where the target holds, as readable ranges.

    Parameters
    ----------
    cells : pandas.DataFrame
        One row per grid cell with the grid values and ``ok_column``.
    keys : sequence of str
        The swept quantities.
    ok_column : str, optional
        Boolean column: the cell meets the target.
    x : str, optional
        The quantity written first, as a range per row (default: the last
        of ``keys``); the second quantity's rows with the same range are
        merged.

    Returns
    -------
    pandas.DataFrame
        One row per strip of a region: ``region`` (1 = the most cells),
        ``cells`` (of the region), ``share`` of the grid [-],
        ``<quantity>_low`` and ``<quantity>_high`` per swept quantity
        (column names as in :data:`explore.study.COLUMN`, e.g.
        ``angle_deg_low`` [deg]), ``kind`` (``strip`` or, for two swept
        quantities and a region of more than one strip, ``largest block``:
        the largest rectangle inside the region, and ``extent``: the
        smallest rectangle around it) and ``text``. Empty when no cell meets the target.
    """
    x = x or keys[-1]
    order = [x] + [k for k in keys if k != x]
    ok, axes = as_array(cells, order, ok_column)
    labels, count = ndimage.label(ok)
    sizes = np.bincount(labels.ravel())[1:]
    rows = []
    for rank, label in enumerate(np.argsort(-sizes, kind="stable") + 1, start=1):
        region = labels == label
        merged, open_strips = [], {}
        for other, start, stop in _strips(region, 0):
            y, rest = (other[0], other[1:]) if other else (0, ())
            key = ((start, stop), rest)
            strip = open_strips.get(key)
            if strip is not None and strip["last"] == y - 1:
                strip["last"] = y          # the row below had the same run: one strip
            else:
                open_strips[key] = {"run": (start, stop), "rest": rest, "first": y, "last": y}
                merged.append(open_strips[key])
        spans = [{x: strip["run"]} for strip in merged]
        for span, strip in zip(spans, merged):
            if len(order) > 1:
                span[order[1]] = (strip["first"], strip["last"])
            for k, i in zip(order[2:], strip["rest"]):
                span[k] = (i, i)
        kinds = ["strip"] * len(spans)
        if len(order) == 2 and len(spans) > 1:
            block = _largest_block(region.T)
            spans[:0] = [{order[1]: block[0], x: block[1]},
                         {k: (min(sp[k][0] for sp in spans), max(sp[k][1] for sp in spans)) for k in order}]
            kinds[:0] = ["largest block", "extent"]
        for span, kind in zip(spans, kinds):
            row = {"region": rank, "cells": int(sizes[label - 1]), "share": sizes[label - 1] / ok.size,
                   "kind": kind}
            for k, axis in zip(order, axes):
                row[f"{COLUMN[k]}_low"], row[f"{COLUMN[k]}_high"] = axis[span[k][0]], axis[span[k][1]]
            first, *rest = [quantity_range_words(k, axis[span[k][0]], axis[span[k][1]]) for k, axis in zip(order, axes)]
            joiner = " and " if kind == "extent" else " for "
            row["text"] = first + (joiner + ", ".join(rest) if rest else "")
            rows.append(row)
    columns = ["region", "cells", "share", "kind"] + [f"{COLUMN[k]}_{end}" for k in keys for end in ("low", "high")]
    return pd.DataFrame(rows, columns=columns + ["text"])


def _share(share):
    """``38%``, or ``<1%`` for a region too small to round to a whole percent."""
    return f"{share:.0%}" if share >= 0.005 else "<1%"


def region_sentences(regions: pd.DataFrame, limit=3, smallest=4):
    """One sentence per safe region, for the report and the terminal.

    Parameters
    ----------
    regions : pandas.DataFrame
        :func:`safe_regions`'s table.
    limit : int, optional
        How many regions to describe, largest first.
    smallest : int, optional
        Regions of fewer cells are only counted: with a few dozen drops per
        cell, a lone cell over the target is as likely the draws' noise as
        a place to aim for. [cells]

    Returns
    -------
    list of str
        E.g. ``Region 1 (604 cells, 38 % of the grid): angle 25.5-61.5 deg
        for aspect ratio 5-7 as one block, within angle 12-87 deg and aspect
        ratio 3.4-7.``
    """
    out = []
    groups = [rows for _, rows in regions.groupby("region", sort=True)]
    described = [rows for rows in groups if rows["cells"].iloc[0] >= smallest][:limit]
    for rows in described:
        text = {kind: list(rows.loc[rows["kind"] == kind, "text"]) for kind in ("largest block", "extent", "strip")}
        size = rows["cells"].iloc[0]
        line = (f"Region {rows['region'].iloc[0]} ({size} cell{'' if size == 1 else 's'}, "
                f"{_share(rows['share'].iloc[0])} of the grid): ")
        if text["largest block"]:
            line += f"{text['largest block'][0]} as one block, within {text['extent'][0]}"
        else:
            line += "; ".join(text["strip"])
        out.append(line + ".")
    rest = len(groups) - len(described)
    if rest:
        out.append(f"{rest} other, smaller region(s) are listed in the CSV only.")
    return out
