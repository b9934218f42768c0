"""Regime maps, 1-D curves and the robustness map of a study.

Every figure is written next to a CSV file of the numbers behind it.
Colours: viridis / cividis (colour-blind safe, readable in grey), contour
lines in black and white.
"""
from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from .metric_kinds import METRIC_KINDS  # noqa: E402
from .figures import OKABE_ITO, save_figure  # noqa: E402
from .plan import cell_coordinates  # noqa: E402
from .study import COLUMN, Study, label  # noqa: E402


def metric_words(study: Study):
    """The study's metric and its event in plain words, for captions.

    Parameters
    ----------
    study : Study
        The validated study; only ``study.metric`` is read.

    Returns
    -------
    value_words : str
        What a drop's value is, e.g. ``rebound ratio of the best later
        bounce (lowest point height / its release height)``.
    event_words : str
        What counts as the event, e.g. ``best later bounce above 1 x the
        release height of the lowest point``.
    """
    return METRIC_KINDS[study.metric.kind].words(study.metric)


def energy_note(study: Study):
    """What the energy bound allows for the study's reference point.

    Released from rest, the centre can never rise above its release height
    (impacts only dissipate); spin or a throw at release raises that bound,
    and the lowest or top point can beat its own release height because
    its height relative to the centre changes with orientation
    (docs/physics.md section 6).

    Parameters
    ----------
    study : Study
        The validated study; its metric reference and release spin and
        velocity are read.

    Returns
    -------
    str
        One or two sentences for map captions and the report.
    """
    ref = study.metric.reference
    spin = study.quantity("spin")
    moving = spin.varies or spin.value != 0 or study.release.vx.varies or study.release.vy.varies \
        or study.release.vx.value != 0 or study.release.vy.value != 0
    text = ("Energy bound: released from rest, the centre can never rise above its release height "
            "(total energy / m g); ")
    if ref == "centre":
        text += ("here spin or a throw is given at release, so the bound is higher and the centre can beat it."
                 if moving else "with no spin or throw here, a centre ratio above 1 is impossible.")
    else:
        text += (f"the {'lowest' if ref == 'bottom' else 'top'} point can still beat its own release height "
                 "because its height relative to the centre changes with orientation.")
    return text


def _cells(study: Study, table: pd.DataFrame, keys):
    cols = [COLUMN[k] for k in keys]
    g = table.groupby(cols, sort=True)
    out = pd.DataFrame({
        "drops": g.size(),
        "mean_value": g["value"].mean(),
        "event_probability": g["event"].mean(),
        "mean_best_later_ratio": g["best_later_ratio"].mean(),
        "beats_first_probability": g["beats_first"].mean(),
        "beats_release_probability": g["beats_release"].mean(),
        "inside_floor_fraction": g["value"].apply(lambda v: float(np.isnan(v).mean())),
    }).reset_index()
    return out


def _grid(cells, x, y, column):
    xs = np.sort(cells[COLUMN[x]].unique())
    ys = np.sort(cells[COLUMN[y]].unique())
    z = cells.pivot(index=COLUMN[y], columns=COLUMN[x], values=column).reindex(index=ys, columns=xs)
    return xs, ys, z.to_numpy()


def regime_map(study: Study, table: pd.DataFrame, x, y, folder: Path, formats=("png",)):
    """Map of the metric over two grid quantities, and the CSV behind it.

    Colours show the probability of the metric's event per cell (or the
    mean value when each cell holds a single drop of a ratio metric); lines
    mark where the mean best later ratio equals ``metric.threshold`` and
    where a later bounce beats the first in half the drops.

    Parameters
    ----------
    study : Study
        The validated study (metric, names, captions).
    table : pandas.DataFrame
        The ``grid`` stage's result table: inputs plus the metric columns
        of :mod:`explore.metrics`, one row per drop.
    x, y : str
        Grid quantities for the horizontal and vertical axis (names of
        :data:`explore.study.QUANTITIES`); axis units as in the study
        ([deg] for angles, [m] for lengths, [-] for ratios).
    folder : pathlib.Path
        Where ``map-<x>-<y>.<format>`` and ``map-<x>-<y>.csv`` are written
        (created if missing).
    formats : sequence of str, optional
        Picture formats: ``png``, ``svg``, ``pdf``.

    Returns
    -------
    paths : list of pathlib.Path
        One picture per format.
    csv : pathlib.Path
        Per cell: the two grid values, ``drops``, ``mean_value``,
        ``event_probability`` [-], ``mean_best_later_ratio`` [-],
        ``beats_first_probability`` [-], ``beats_release_probability`` [-]
        and ``inside_floor_fraction`` [-].
    """
    folder.mkdir(parents=True, exist_ok=True)
    cells = _cells(study, table, [x, y])
    per_cell = int(cells["drops"].min())
    base = folder / f"map-{x}-{y}"
    cells.to_csv(base.with_suffix(".csv"), index=False)
    value_words, event_words = metric_words(study)
    show_probability = per_cell > 1 or METRIC_KINDS[study.metric.kind].is_flag
    column = "event_probability" if show_probability else "mean_value"
    xs, ys, z = _grid(cells, x, y, column)
    fig, ax = plt.subplots(figsize=(8, 6), constrained_layout=True)
    cmap = plt.get_cmap("cividis" if show_probability else "viridis").with_extremes(bad="0.85")
    mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(z), shading="nearest", cmap=cmap,
                         vmin=0 if show_probability else None, vmax=1 if show_probability else None)
    bar = fig.colorbar(mesh, ax=ax)
    bar.set_label(f"probability: {event_words}" if show_probability else value_words, fontsize=9)
    legend = []
    if len(xs) > 1 and len(ys) > 1:
        _, _, ratio = _grid(cells, x, y, "mean_best_later_ratio")
        if np.nanmin(ratio) < study.metric.threshold < np.nanmax(ratio):
            cs = ax.contour(xs, ys, ratio, levels=[study.metric.threshold], colors="white", linewidths=2.2)
            ax.contour(xs, ys, ratio, levels=[study.metric.threshold], colors="black", linewidths=1.0)
            legend.append(plt.Line2D([], [], color="black", lw=1.5,
                                     label=f"mean best later bounce = {study.metric.threshold:g} x release height"))
        _, _, first = _grid(cells, x, y, "beats_first_probability")
        if np.nanmin(first) < 0.5 < np.nanmax(first):
            ax.contour(xs, ys, first, levels=[0.5], colors="white", linewidths=2.0, linestyles="--")
            ax.contour(xs, ys, first, levels=[0.5], colors="black", linewidths=1.0, linestyles="--")
            legend.append(plt.Line2D([], [], color="black", lw=1.2, ls="--",
                                     label="a later bounce beats the first (half the drops)"))
    if np.isnan(z).any():
        legend.append(matplotlib.patches.Patch(color="0.85", label="body would start inside the floor"))
    if legend:
        ax.legend(handles=legend, loc="upper center", bbox_to_anchor=(0.5, -0.13), fontsize=8, ncol=1,
                  frameon=False)
    ax.set_xlabel(label(x))
    ax.set_ylabel(label(y))
    ax.set_title(f"{study.name}: where the high rebound happens", fontsize=11)
    caption = (f"Reference point: {study.metric.reference}. {per_cell} drop(s) per cell"
               + (f" over {', '.join(n for n in study.varying() if n not in (x, y))}" if per_cell > 1 else "")
               + ". " + energy_note(study))
    fig.text(0.01, 0.005, _wrap(caption, 120), fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.06, 1, 0.94))
    return save_figure(fig, base, formats), base.with_suffix(".csv")


def curve(study: Study, table: pd.DataFrame, x, folder: Path, formats=("png",)):
    """Metric against one grid quantity: median with a 10-90 % band over
    every other quantity, and the probability of the event.

    Parameters
    ----------
    study : Study
        The validated study.
    table : pandas.DataFrame
        The ``grid`` stage's result table (one row per drop).
    x : str
        The grid quantity on the horizontal axis (unit as in the study).
    folder : pathlib.Path
        Where ``curve-<x>.<format>`` and ``curve-<x>.csv`` are written.
    formats : sequence of str, optional
        As for :func:`regime_map`.

    Returns
    -------
    tuple
        The picture paths and the CSV path, as :func:`regime_map`; the CSV
        holds, per value of ``x``, ``drops``, ``median_value``,
        ``p10_value``, ``p90_value``, ``mean_value`` (the metric's unit:
        [-]) and ``event_probability`` [-].
    """
    folder.mkdir(parents=True, exist_ok=True)
    col = COLUMN[x]
    g = table.groupby(col, sort=True)["value"]
    frame = pd.DataFrame({"drops": g.size(), "median_value": g.median(), "p10_value": g.quantile(0.1),
                          "p90_value": g.quantile(0.9), "mean_value": g.mean(),
                          "event_probability": table.groupby(col, sort=True)["event"].mean()}).reset_index()
    base = folder / f"curve-{x}"
    frame.to_csv(base.with_suffix(".csv"), index=False)
    value_words, event_words = metric_words(study)
    fig, ax = plt.subplots(figsize=(8, 4.8), constrained_layout=True)
    ax.fill_between(frame[col], frame["p10_value"], frame["p90_value"], color=OKABE_ITO["sky"], alpha=0.4,
                    label="10-90 % of drops (other quantities)")
    ax.plot(frame[col], frame["median_value"], color=OKABE_ITO["blue"], lw=2, label="median")
    if not METRIC_KINDS[study.metric.kind].is_flag:
        ax.axhline(study.metric.threshold, color=OKABE_ITO["red"], ls="--",
                   label=f"ratio {study.metric.threshold:g}: the release height (left axis)")
    ax2 = ax.twinx()
    ax2.plot(frame[col], frame["event_probability"], color=OKABE_ITO["green"], lw=1.2, ls=":")
    ax2.set_ylim(0, 1.02)
    ax2.set_ylabel("probability of the event [-]", color=OKABE_ITO["green"])
    ax.plot([], [], color=OKABE_ITO["green"], ls=":", label=f"probability: {event_words}")
    ax.set_xlabel(label(x))
    ax.set_ylabel("fraction of drops [-]" if METRIC_KINDS[study.metric.kind].is_flag else "rebound ratio [-]")
    fig.text(0.01, 0.005, _wrap(f"Metric: {value_words}. {energy_note(study)}", 130), fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.08, 1, 0.92))
    ax.set_ylim(bottom=0)
    ax.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=2, frameon=False)
    ax.set_title(f"{study.name}: metric against {label(x)}", fontsize=11)
    return save_figure(fig, base, formats), base.with_suffix(".csv")


def tolerance_effect(robust: pd.DataFrame, grid: pd.DataFrame) -> pd.DataFrame:
    """How much release errors move the metric, per grid cell.

    Each toleranced drop is compared with its partner, the same drop
    released exactly (row ``pair`` of ``grid``).

    Parameters
    ----------
    robust : pandas.DataFrame
        The ``robust`` stage's result table: columns ``cell``, ``pair``,
        ``value`` and ``event``.
    grid : pandas.DataFrame
        The ``grid`` stage's result table, in stage order (``value``).

    Returns
    -------
    pandas.DataFrame
        Indexed by ``cell``: ``drops``; ``mean_change``, the mean of
        |value - partner's value| over the drops where both are defined
        (the metric's unit, [-]); ``event_probability`` under tolerance
        [-]; ``mean_value`` under tolerance; ``inside_floor_fraction`` [-],
        the share of drops that would start inside the floor (value NaN).
    """
    partner = grid["value"].to_numpy()[robust["pair"].to_numpy()]
    change = np.abs(robust["value"].to_numpy() - partner)
    frame = pd.DataFrame({"cell": robust["cell"].to_numpy(), "change": change,
                          "event": robust["event"].to_numpy(), "value": robust["value"].to_numpy()})
    g = frame.groupby("cell", sort=True)
    return pd.DataFrame({"drops": g.size(), "mean_change": g["change"].mean(), "event_probability": g["event"].mean(),
                         "mean_value": g["value"].mean(),
                         "inside_floor_fraction": g["value"].apply(lambda v: float(np.isnan(v).mean()))})


def robustness(study: Study, robust: pd.DataFrame, grid: pd.DataFrame, x, y, folder: Path, formats=("png",)):
    """Map (or curve) of how much the metric moves under the release
    tolerance, per grid cell, and the CSV behind it.

    Parameters
    ----------
    study : Study
        The validated study (tolerance, picks target, names).
    robust, grid : pandas.DataFrame
        The ``robust`` and ``grid`` stages' result tables
        (see :func:`tolerance_effect`).
    x : str
        Grid quantity on the horizontal axis.
    y : str or None
        Grid quantity on the vertical axis; None draws a curve over ``x``
        (cells averaged over the other grid quantities).
    folder, formats
        As for :func:`regime_map`; the files are named
        ``robustness-<x>[-<y>]``.

    Returns
    -------
    (list of pathlib.Path, pathlib.Path)
        Pictures and CSV. Per point drawn, the CSV has the grid values,
        ``drops``, ``mean_change`` (the metric's unit, [-]) and
        ``event_probability`` [-].
    """
    folder.mkdir(parents=True, exist_ok=True)
    keys = [k for k in (x, y) if k is not None]
    cols = [COLUMN[k] for k in keys]
    per_cell = tolerance_effect(robust, grid).join(cell_coordinates(study).set_index("cell"))
    g = per_cell.groupby(cols, sort=True)
    cells = pd.DataFrame({"drops": g["drops"].sum(), "mean_change": g["mean_change"].mean(),
                          "event_probability": g["event_probability"].mean()}).reset_index()
    base = folder / ("robustness-" + "-".join(keys))
    cells.to_csv(base.with_suffix(".csv"), index=False)
    tol = study.tolerance
    tol_text = f"angle +-{tol.angle:g} deg, height +-{tol.height * 1e3:g} mm" + (
        f", spin +-{tol.spin:g} rad/s" if tol.spin else "")
    fig, ax = plt.subplots(figsize=(8, 6) if y else (8, 4.8), constrained_layout=True)
    if y is not None:
        xs, ys, z = _grid(cells, x, y, "mean_change")
        cmap = plt.get_cmap("magma").with_extremes(bad="0.85")
        mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(z), shading="nearest", cmap=cmap)
        fig.colorbar(mesh, ax=ax).set_label("mean change of the metric caused by release errors [-]", fontsize=9)
        _, _, p = _grid(cells, x, y, "event_probability")
        target = study.analyses.picks.target if study.analyses.picks else 0.8
        if np.nanmin(p) < target < np.nanmax(p):
            ax.contour(xs, ys, p, levels=[target], colors="white", linewidths=2.2)
            ax.contour(xs, ys, p, levels=[target], colors=OKABE_ITO["blue"], linewidths=1.2)
            ax.legend(handles=[plt.Line2D([], [], color=OKABE_ITO["blue"], lw=1.5,
                                          label=f"event in {target:.0%} of toleranced drops")],
                      loc="upper center", bbox_to_anchor=(0.5, -0.13), fontsize=8, frameon=False)
        ax.set_ylabel(label(y))
    else:
        ax.plot(cells[COLUMN[x]], cells["mean_change"], color=OKABE_ITO["purple"], lw=2)
        ax.set_ylabel("mean change of the metric caused by release errors [-]")
    ax.set_xlabel(label(x))
    ax.set_title(f"{study.name}: robustness to release errors ({tol_text})", fontsize=11)
    fig.text(0.01, 0.005, _wrap(f"Bright = chaotic: small release errors change the outcome a lot; avoid "
                                f"those regions. {tol.draws} toleranced drops per cell, each compared with the same "
                                "drop released exactly (same restitution, friction, ...).", 120),
             fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.05, 1, 0.95))
    return save_figure(fig, base, formats), base.with_suffix(".csv")


def _wrap(text, width):
    import textwrap
    return "\n".join(textwrap.wrap(text, width))
