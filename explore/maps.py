"""Regime maps and 1-D curves of a study (the robustness map: :mod:`explore.robust_map`).

Every figure is written next to a CSV file of the numbers behind it.
Colours: viridis / cividis (colour-blind safe, readable in grey), contour
lines in black and white.
"""
from __future__ import annotations

import textwrap
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from hopscape.sim.impact import LAW_CODE, LAW_TABLE  # noqa: E402

from .metric_kinds import METRIC_KINDS  # noqa: E402
from .figures import OKABE_ITO, save_figure  # noqa: E402
from .under_tolerance import wilson_interval  # noqa: E402
from .study import COLUMN, Study, label  # noqa: E402
from .files import write_csv  # noqa: E402


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
    when the impact law never creates energy (each law's ``creates_energy``
    in :data:`hopscape.sim.impact.LAW_TABLE`); spin or a throw at release
    raises that bound, and the lowest or top point can beat its own release
    height because its height relative to the centre changes with
    orientation (docs/physics.md section 6).

    Parameters
    ----------
    study : Study
        The validated study; its impact law, floor angle, metric reference
        and release spin and velocity are read.

    Returns
    -------
    str
        One or two sentences for map captions and the report.
    """
    if inclined(study):
        return ("Energy bound: none here. On an inclined floor heights are measured normal to the floor, and a "
                "body moving downhill gains energy, so it can rise above its release height even from rest.")
    if creates_energy(study):
        return (f"Energy bound: none here. The {study.contact.law} law can create energy at an impact (with stick "
                "as well as with slip reversal), so even released from rest the centre may rise above its release "
                "height; the bound holds only for laws that never create energy.")
    ref = study.metric.reference
    spin = study.quantity("spin")
    moving = spin.varies or spin.value != 0 or study.release.vx.varies or study.release.vy.varies \
        or study.release.vx.value != 0 or study.release.vy.value != 0
    text = (f"Energy bound: released from rest, the centre can never rise above its release height "
            f"(total energy / m g; the {study.contact.law} law never creates energy); ")
    if ref == "centre":
        text += ("here spin or a throw is given at release, so the bound is higher and the centre can beat it."
                 if moving else "with no spin or throw here, a centre ratio above 1 is impossible.")
    else:
        text += (f"the {'lowest' if ref == 'bottom' else 'top'} point can still beat its own release height "
                 "because its height relative to the centre changes with orientation.")
    return text


def inclined(study: Study) -> bool:
    """Whether any drop of the study lands on an inclined floor (no energy bound there)."""
    floor = study.quantity("floor_angle")
    return floor is not None and floor.span() != (0.0, 0.0)


def energy_bound_holds(study: Study) -> bool:
    """Whether released from rest the centre can never rise above its release
    height: a level floor and a law that never creates energy."""
    return not inclined(study) and not creates_energy(study)


def creates_energy(study: Study) -> bool:
    """Whether the study's impact law can create energy (:data:`hopscape.sim.impact.LAW_TABLE`)."""
    return LAW_TABLE[LAW_CODE[study.contact.law]].creates_energy


def flat(z) -> bool:
    """True when a map's field has one value everywhere (contours there would be noise)."""
    z = np.asarray(z, dtype=float)
    return not np.isfinite(z).any() or np.nanmax(z) - np.nanmin(z) < 1e-12


def goal_clause(study: Study) -> str:
    """``goal: seek it`` or ``goal: avoid it``, for titles."""
    return f"goal: {study.metric.goal} it"


def flat_words(z) -> str:
    """What a flat probability field says, e.g. ``never happens here``."""
    level = float(np.nanmax(z))
    return "never happens here" if level == 0 else ("happens in every drop here" if level == 1
                                                    else f"probability {level:.2f} everywhere")


def _cells(table: pd.DataFrame, keys):
    cols = [COLUMN[k] for k in keys]
    # probabilities count the drops that were simulated: a drop that would
    # start inside the floor has no outcome, neither event nor its absence
    simulated = (table["status"].astype(str) != "inside floor").rename("simulated")
    frame = table[cols].assign(simulated=simulated,
                               event=table["event"] & simulated,
                               beats_first=table["beats_first"] & simulated,
                               beats_release=table["beats_release"] & simulated,
                               value=table["value"], best_later_ratio=table["best_later_ratio"])
    g = frame.groupby(cols, sort=True)
    count = g["simulated"].sum()
    shown = count.where(count > 0)
    out = pd.DataFrame({
        "drops": g.size(),
        "simulated": count,
        "mean_value": g["value"].mean(),
        "event_probability": g["event"].sum() / shown,
        "events": g["event"].sum(),
        "mean_best_later_ratio": g["best_later_ratio"].mean(),
        "beats_first_probability": g["beats_first"].sum() / shown,
        "beats_release_probability": g["beats_release"].sum() / shown,
        "inside_floor_fraction": 1.0 - count / g.size(),
    }).reset_index()
    out["event_low"], out["event_high"] = wilson_interval(out.pop("events"), out["simulated"].where(out["simulated"] > 0))
    return out


#: Below this many drops per cell the map's level lines are drawn through
#: 3 x 3 neighbourhood means: a share from 16 drops moves by +-0.12 (one
#: standard error at p = 1/2), enough to scatter a 0.5 line into islands.
SMOOTH_BELOW = 100


def neighbourhood_mean(z):
    """Mean of each cell and its up to 8 neighbours, empty cells left out (NaN where all are)."""
    from scipy import ndimage

    z = np.asarray(z, dtype=float)
    known = np.isfinite(z)
    total = ndimage.uniform_filter(np.where(known, z, 0.0), size=3, mode="constant")
    count = ndimage.uniform_filter(known.astype(float), size=3, mode="constant")
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0, total / count, np.nan)


#: A map cell where more than this share of the drops would start inside the
#: floor is drawn as such, not as a result: the few drops left say little.
MOSTLY_INSIDE = 0.5


def grid_of(cells, x, y, column):
    """A per-cell column as (x values, y values, 2-D array with y down the rows)."""
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
        Per cell: the two grid values, ``drops``, ``simulated`` (the
        drops that did not start inside the floor), ``mean_value``,
        ``event_probability`` [-] (over the simulated drops), ``mean_best_later_ratio`` [-],
        ``beats_first_probability`` [-], ``beats_release_probability`` [-],
        ``inside_floor_fraction`` [-] and the event probability's 95 %
        Wilson interval ``event_low``, ``event_high`` [-].
    """
    folder.mkdir(parents=True, exist_ok=True)
    cells = _cells(table, [x, y])
    per_cell = int(cells["drops"].min())
    base = folder / f"map-{x}-{y}"
    write_csv(cells, base.with_suffix(".csv"))
    value_words, event_words = metric_words(study)
    kind = METRIC_KINDS[study.metric.kind]
    show_probability = per_cell > 1 or kind.is_flag
    avoid = study.metric.goal == "avoid"
    column = "event_probability" if show_probability else "mean_value"
    xs, ys, z = grid_of(cells, x, y, column)
    _, _, inside = grid_of(cells, x, y, "inside_floor_fraction")
    z = np.where(inside > MOSTLY_INSIDE, np.nan, z)
    if show_probability and avoid:
        # colours say how often the goal is met, as on the robustness map:
        # bright is good for seek and avoid alike
        z = 1.0 - z
    fig, ax = plt.subplots(figsize=(8, 6), constrained_layout=True)
    cmap = plt.get_cmap("cividis" if show_probability else "viridis").with_extremes(bad="0.85")
    mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(z), shading="nearest", cmap=cmap,
                         vmin=0 if show_probability else None, vmax=1 if show_probability else None)
    bar = fig.colorbar(mesh, ax=ax)
    bar.set_label(wrap((f"probability it does not happen: {event_words}" if avoid else
                        f"probability: {event_words}") if show_probability else value_words, 60), fontsize=9)
    legend = []
    # a flat field (the event never or always happens) gets no contours:
    # lines drawn there would follow noise in the other columns; nor does a
    # metric judged on a height limit, which the ratio lines say nothing about
    if len(xs) > 1 and len(ys) > 1 and not flat(z) and not kind.uses_limit and not kind.needs:
        _, _, ratio = grid_of(cells, x, y, "mean_best_later_ratio")
        _, _, first = grid_of(cells, x, y, "beats_first_probability")
        if per_cell < SMOOTH_BELOW:
            # with few drops per cell a level line follows each cell's noise
            # (islands everywhere): draw it through 3 x 3 neighbourhood means
            ratio, first = neighbourhood_mean(ratio), neighbourhood_mean(first)
        if np.nanmin(ratio) < study.metric.threshold < np.nanmax(ratio):
            ax.contour(xs, ys, ratio, levels=[study.metric.threshold], colors="white", linewidths=2.2)
            ax.contour(xs, ys, ratio, levels=[study.metric.threshold], colors="black", linewidths=1.0)
            legend.append(plt.Line2D([], [], color="black", lw=1.5,
                                     label=f"mean best later bounce = {study.metric.threshold:g} x release height"))
        if np.nanmin(first) < 0.5 < np.nanmax(first):
            ax.contour(xs, ys, first, levels=[0.5], colors="white", linewidths=2.0, linestyles="--")
            ax.contour(xs, ys, first, levels=[0.5], colors="black", linewidths=1.0, linestyles="--")
            legend.append(plt.Line2D([], [], color="black", lw=1.2, ls="--",
                                     label="a later bounce beats the first (half the drops)"))
        if per_cell < SMOOTH_BELOW and legend:
            legend.append(plt.Line2D([], [], ls="", label=f"lines through 3 x 3 cell means ({per_cell} drops per cell)"))
    if np.isnan(z).any():
        legend.append(matplotlib.patches.Patch(color="0.85", label="no value: landing exactly flat or on a face "
                                               "(a line or area contact, not Hertzian), or more than half the drops "
                                               "inside the floor" if kind.needs else "more than half the drops would "
                                               "start inside the floor (not simulated)"))
    if legend:
        ax.legend(handles=legend, loc="upper center", bbox_to_anchor=(0.5, -0.13), fontsize=8, ncol=1,
                  frameon=False)
    ax.set_xlabel(label(x))
    ax.set_ylabel(label(y))
    where = f"where it is avoided that {event_words}" if avoid else f"where {event_words}"
    ax.set_title(wrap(f"{study.name}: {where} ({goal_clause(study)})"
                       + (f" - {flat_words(1.0 - z if avoid else z)}" if show_probability and flat(z) else ""), 80),
                 fontsize=10)
    caption = (f"Reference point: {study.metric.reference}. {per_cell} drop(s) per cell"
               + (f" over {', '.join(n for n in study.varying() if n not in (x, y))}" if per_cell > 1 else "")
               + ". " + energy_note(study))
    fig.text(0.01, 0.005, wrap(caption, 120), fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.06, 1, 0.94))
    return save_figure(fig, base, formats), base.with_suffix(".csv")


def curve(study: Study, table: pd.DataFrame, x, folder: Path, formats=("png",)):
    """Metric against one grid quantity, over every other quantity.

    A ratio metric is drawn as its median with a 10-90 % band, and the
    probability of the event beside it; a flag metric (0/1) only as the
    probability of the event, with its 95 % Wilson interval [1]_.

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
        [-]), ``event_probability`` [-] and its Wilson interval
        ``event_low``, ``event_high`` [-].

    References
    ----------
    .. [1] Wilson, E. B. (1927). J. Am. Stat. Assoc. 22:209-212.
    """
    folder.mkdir(parents=True, exist_ok=True)
    col = COLUMN[x]
    g = table.groupby(col, sort=True)["value"]
    simulated = (table["status"].astype(str) != "inside floor").groupby(table[col], sort=True).sum()
    events = table.groupby(col, sort=True)["event"].sum()
    shown = simulated.where(simulated > 0)   # probabilities over the drops that were simulated
    low, high = wilson_interval(events.to_numpy(), shown.to_numpy())
    frame = pd.DataFrame({"drops": g.size(), "simulated": simulated, "median_value": g.median(),
                          "p10_value": g.quantile(0.1), "p90_value": g.quantile(0.9), "mean_value": g.mean(),
                          "event_probability": events / shown, "event_low": low, "event_high": high}).reset_index()
    base = folder / f"curve-{x}"
    write_csv(frame, base.with_suffix(".csv"))
    value_words, event_words = metric_words(study)
    is_flag = METRIC_KINDS[study.metric.kind].is_flag
    # as on the maps: for a study that avoids the event, the line is how
    # often the goal is met, so that up is good for seek and avoid alike
    avoid = study.metric.goal == "avoid"
    probability, band = ((1 - frame["event_probability"], (1 - frame["event_high"], 1 - frame["event_low"])) if avoid
                         else (frame["event_probability"], (frame["event_low"], frame["event_high"])))
    probability_words = (f"probability it does not happen: {event_words}" if avoid
                         else f"probability: {event_words}")
    axis_words = "probability it does not happen [-]" if avoid else "probability of the event [-]"
    fig, ax = plt.subplots(figsize=(8, 4.8), constrained_layout=True)
    if is_flag:
        ax2 = ax
        ax.set_ylabel(axis_words)
    else:
        ax.fill_between(frame[col], frame["p10_value"], frame["p90_value"], color=OKABE_ITO["sky"], alpha=0.4,
                        label="10-90 % of drops (other quantities)")
        ax.plot(frame[col], frame["median_value"], color=OKABE_ITO["blue"], lw=2, label="median")
        kind = METRIC_KINDS[study.metric.kind]
        level = study.metric.threshold if kind.uses_threshold else study.metric.limit if kind.uses_limit else None
        if level is not None:
            said = f"{level:g} m ({level * 1e3:g} mm)" if kind.uses_limit else f"{level:g}"
            ax.axhline(level, color=OKABE_ITO["red"], ls="--", label=f"{said}: where the event begins (left axis)")
        ax.set_ylabel(wrap(value_words, 45), fontsize=8)
        ax.set_ylim(bottom=0)
        ax2 = ax.twinx()
        ax2.set_ylabel(axis_words, color=OKABE_ITO["green"])
    ax2.fill_between(frame[col], *band, color=OKABE_ITO["green"], alpha=0.18, lw=0)
    ax2.plot(frame[col], probability, color=OKABE_ITO["green"], lw=1.6)
    ax2.set_ylim(0, 1.02)
    ax.plot([], [], color=OKABE_ITO["green"], lw=1.6, label=probability_words)
    ax.fill_between([], [], [], color=OKABE_ITO["green"], alpha=0.18, label="95 % Wilson interval")
    ax.set_xlabel(label(x))
    fig.text(0.01, 0.005, wrap(f"Metric: {value_words}. {energy_note(study)}", 130), fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.08, 1, 0.92))
    ax.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=2, frameon=False)
    ax.set_title(f"{study.name}: metric against {label(x)} ({goal_clause(study)})", fontsize=11)
    return save_figure(fig, base, formats), base.with_suffix(".csv")


def wrap(text, width):
    """``text`` broken into lines of at most ``width`` characters, for captions."""
    return "\n".join(textwrap.wrap(text, width))
