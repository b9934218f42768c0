"""Charts of sensitivity results: the ranking and its convergence.

The numbers come from :mod:`explore.sensitivity`; this module only draws.
Figures are made without pyplot (nothing stays open) and written through
:func:`explore.figures.save_figure`. Colours: Okabe-Ito blue for first
order, orange for total [1].

References
----------
.. [1] Okabe, M., Ito, K. (2008). Color universal design (CUD): how to make
   figures and presentations that are friendly to colorblind people.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from ._arguments import SensitivityError, fail
from .figures import OKABE_ITO, save_figure
from .sensitivity._columns import CONVERGENCE_COLUMNS, SOBOL_COLUMNS

__all__ = ["ranking_chart", "convergence_chart", "CHART_SUFFIXES", "INDEX_DISPLAY_RANGE"]

S1_COLOUR = OKABE_ITO["blue"]
ST_COLOUR = OKABE_ITO["orange"]

#: Chart display range of an index: estimates can stray a little outside
#: [0, 1] from sampling error; the chart clips them, the tables do not.
INDEX_DISPLAY_RANGE = (0.0, 1.05)

CHART_SUFFIXES = (".png", ".svg", ".pdf")

#: The index column printed beside the bars is small print; 150 dpi keeps it legible.
CHART_DPI = 150


def _chart_path(path):
    path = Path(path)
    if path.suffix.lower() not in CHART_SUFFIXES:
        fail("path", f"a file ending in {', '.join(CHART_SUFFIXES)}", str(path))
    return path


def _need_columns(table, columns, what):
    if not isinstance(table, pd.DataFrame):
        fail(what, "a pandas DataFrame", type(table).__name__)
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise SensitivityError(f"{what}: lacks the column(s) {', '.join(missing)} "
                               f"(has {', '.join(map(str, table.columns))})")


def _clipped_interval(value, half_width):
    """Displayed value and asymmetric error-bar lengths, all within the display range."""
    low, high = INDEX_DISPLAY_RANGE
    value = np.asarray(value, dtype=float)
    half_width = np.nan_to_num(np.asarray(half_width, dtype=float))
    shown = np.clip(value, low, high)
    lower = np.clip(value - half_width, low, high)
    upper = np.clip(value + half_width, low, high)
    clipped = bool(np.any((value - half_width < low) | (value + half_width > high)))
    return shown, np.vstack([shown - lower, upper - shown]), clipped


def _level_text(table):
    level = table.attrs.get("confidence_level")
    return f"{100 * level:g} % confidence intervals" if level else "confidence intervals"


def ranking_chart(table, path, title="Sensitivity ranking"):
    """Horizontal bars of S1 and ST with confidence intervals, by ST.

    Parameters
    ----------
    table : pandas.DataFrame
        The ``indices`` frame of :func:`explore.sensitivity.sobol_analyze` (columns
        ``parameter, S1, S1_conf, ST, ST_conf``).
    path : str or pathlib.Path
        Output file; the format follows the suffix (.png, .svg or .pdf).
    title : str, optional
        Chart title.

    Returns
    -------
    matplotlib.figure.Figure
        The figure (not registered with pyplot, so nothing stays open).
        Its axes' y tick labels list the parameters from the top bar down,
        largest ST first.

    Notes
    -----
    Bars and interval whiskers are clipped to [0, 1.05] for display only;
    a note says so when it happened, and the unclipped estimates are
    printed in a column right of the plot. Colours: Okabe-Ito blue (S1)
    and orange (ST) [1].
    """
    _need_columns(table, SOBOL_COLUMNS[:5], "table")
    path = _chart_path(path)
    ordered = table.sort_values("ST", ascending=False, kind="stable").reset_index(drop=True)
    count = len(ordered)
    positions = np.arange(count)
    thickness = 0.38
    series = (("ST", ST_COLOUR, -thickness / 2, "ST, total (with interactions)"),
              ("S1", S1_COLOUR, thickness / 2, "S1, first order (alone)"))

    fig = Figure(figsize=(8.0, 1.7 + 0.5 * count), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    whisker = {"ecolor": "#333333", "capsize": 3, "elinewidth": 1.0}
    clipped = False
    # the numbers go in a column right of the axes, where no bar can reach
    column = ax.get_yaxis_transform()
    for name, colour, offset, label in series:
        values, errors = ordered[name], ordered[f"{name}_conf"]
        shown, bars, cut = _clipped_interval(values, errors)
        clipped |= cut
        ax.barh(positions + offset, shown, height=thickness, color=colour, xerr=bars, error_kw=whisker, label=label)
        for y, value, error in zip(positions + offset, values, errors):
            # + 0.0 turns a rounded -0.00 into 0.00
            ax.text(1.015, y, f"{name} {round(value, 2) + 0.0:.2f} ± {error:.2f}", transform=column,
                    va="center", ha="left", fontsize=7.5, color="#333333")
    ax.set_yticks(positions, labels=list(ordered["parameter"]))
    ax.invert_yaxis()
    ax.set_xlim(*INDEX_DISPLAY_RANGE)
    ax.set_xlabel("Sobol index [-]")
    ax.grid(axis="x", color="#dddddd", linewidth=0.6)
    ax.set_axisbelow(True)
    fig.legend(loc="outside lower center", ncols=2, fontsize=8.5, frameon=False)
    fig.suptitle(title, fontsize=12)
    subtitle = ("S1 = share of output variance from the parameter alone; "
                f"ST = including its interactions.\nWhiskers: {_level_text(table)}")
    if "base_samples" in table.attrs:
        subtitle += f", {table.attrs['base_samples']} base samples"
    if clipped:
        subtitle += "; display clipped to [0, 1.05]"
    ax.set_title(subtitle, fontsize=8.5, color="#333333")
    save_figure(fig, path, dpi=CHART_DPI)
    return fig


def convergence_chart(conv_table, path, title="Convergence of Sobol indices"):
    """S1 and ST of each parameter against the base sample count.

    Parameters
    ----------
    conv_table : pandas.DataFrame
        The frame of :func:`explore.sensitivity.sobol_convergence`.
    path, title
        As in :func:`ranking_chart`.

    Returns
    -------
    matplotlib.figure.Figure
        One panel per parameter (largest total index first, as the
        ranking), x axis log2 of the
        base sample count, whiskers the confidence intervals. Each panel
        has its own y range, from at most 0 to at least 0.1, so that small
        indices still show whether their intervals narrow.
    """
    _need_columns(conv_table, CONVERGENCE_COLUMNS, "conv_table")
    path = _chart_path(path)
    levels = np.sort(conv_table["base_samples"].unique())
    # panels in the ranking's order (total index at the most samples, largest first)
    final = conv_table[conv_table["base_samples"] == levels[-1]].set_index("parameter")["ST"]
    names = sorted(dict.fromkeys(conv_table["parameter"]), key=lambda name: -np.nan_to_num(final.get(name, 0.0)))
    columns = min(len(names), 4)
    rows = math.ceil(len(names) / columns)
    fig = Figure(figsize=(2.9 * columns + 0.6, 2.5 * rows + 1.1), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(rows, columns, squeeze=False).ravel()
    for index, (ax, name) in enumerate(zip(axes, names)):
        part = conv_table[conv_table["parameter"] == name].sort_values("base_samples")
        x = part["base_samples"].to_numpy(dtype=float)
        # nudge the two series apart on the log axis so the whiskers do not overlap
        for column, colour, marker, nudge, label in (("S1", S1_COLOUR, "o", 2 ** -0.06, "S1, first order"),
                                                     ("ST", ST_COLOUR, "s", 2 ** 0.06, "ST, total")):
            ax.errorbar(x * nudge, part[column], yerr=part[f"{column}_conf"], color=colour, marker=marker,
                        markersize=4.5, capsize=3, linewidth=1.3, label=label)
        ends = np.r_[part["S1"] - part["S1_conf"], part["ST"] - part["ST_conf"],
                     part["S1"] + part["S1_conf"], part["ST"] + part["ST_conf"]]
        low, high = min(0.0, float(np.nanmin(ends))), max(0.1, float(np.nanmax(ends)))
        margin = 0.08 * (high - low)
        ax.set_ylim(low - (margin if low < 0 else 0.3 * margin), high + margin)
        ax.axhline(0.0, color="#999999", linewidth=0.6)
        ax.set_title(name, fontsize=10)
        ax.set_xscale("log", base=2)
        ax.set_xticks(levels, labels=[str(int(n)) for n in levels])
        ax.minorticks_off()
        ax.grid(color="#eeeeee", linewidth=0.6)
        if index % columns == 0:
            ax.set_ylabel("Sobol index [-]")
        if index + columns >= len(names):
            ax.set_xlabel("base samples N [-]")
    for ax in axes[len(names):]:
        ax.set_visible(False)
    fig.legend(*axes[0].get_legend_handles_labels(), loc="outside lower center", ncols=2, fontsize=8.5,
               frameon=False)
    fig.suptitle(f"{title}\nflat lines and narrowing whiskers ({_level_text(conv_table)}) mean N was enough",
                 fontsize=10.5)
    save_figure(fig, path, dpi=CHART_DPI)
    return fig
