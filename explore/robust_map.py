"""The robustness map: where the study's goal survives the rig's release errors.

Judged on the outcome the user cares about (:mod:`explore.under_tolerance`):
the left panel is the probability that a toleranced drop does what the
study wants (the event to seek it, its absence to avoid it), with the
target as a line and the picks numbered; the right panel is the flip rate,
how often a release error changes the outcome against the same drop
released exactly, with the chaotic threshold as a line.
"""
from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from .figures import OKABE_ITO, save_figure  # noqa: E402
from .maps import flat, flat_words, grid_of, metric_words, wrap  # noqa: E402
from .study import COLUMN, Study, label  # noqa: E402
from .under_tolerance import goal_words, wilson_interval  # noqa: E402
from .files import write_csv  # noqa: E402


def tolerance_text(study: Study) -> str:
    """The release tolerance in words, e.g. ``angle +-2 deg, height +-1 mm``."""
    tol = study.tolerance
    return f"angle +-{tol.angle:g} deg, height +-{tol.height * 1e3:g} mm" + (
        f", spin +-{tol.spin:g} rad/s" if tol.spin else "")


def _points(cells: pd.DataFrame, keys):
    """Cells pooled over the grid quantities not drawn (drops and outcomes summed)."""
    cols = [COLUMN[k] for k in keys]
    pooled = cells.assign(goal_drops=cells["goal_probability"] * cells["drops"],
                          flips=cells["flip_rate"] * cells["drops"])
    g = pooled.groupby(cols, sort=True)
    out = pd.DataFrame({"drops": g["drops"].sum(), "goal_probability": g["goal_drops"].sum() / g["drops"].sum(),
                        "event_probability": g["event_probability"].mean(),
                        "flip_rate": g["flips"].sum() / g["drops"].sum(),
                        "mean_change": g["mean_change"].mean(), "meets_target": g["meets_target"].all(),
                        "margin_steps": g["margin_steps"].min(), "chaotic": g["chaotic"].any()}).reset_index()
    low, high = wilson_interval(np.rint(g["goal_drops"].sum()).to_numpy(), out["drops"])
    out.insert(out.columns.get_loc("goal_probability") + 1, "goal_low", low)
    out.insert(out.columns.get_loc("goal_low") + 1, "goal_high", high)
    return out


def _line(ax, xs, ys, z, level, colour):
    if len(xs) > 1 and len(ys) > 1 and not flat(z) and np.nanmin(z) < level < np.nanmax(z):
        ax.contour(xs, ys, z, levels=[level], colors="white", linewidths=2.4)
        ax.contour(xs, ys, z, levels=[level], colors=colour, linewidths=1.3)
        return True
    return False


def robustness(study: Study, cells: pd.DataFrame, x, y, folder: Path, picks=None, formats=("png",)):
    """Draw the robustness map (or curve) and write the CSV behind it.

    Parameters
    ----------
    study : Study
        The validated study (goal, tolerance, picks settings, names).
    cells : pandas.DataFrame
        :func:`explore.picks.judged_cells`: one row per grid cell.
    x : str
        Grid quantity on the horizontal axis.
    y : str or None
        Grid quantity on the vertical axis; None draws curves over ``x``.
        Cells are pooled over the other grid quantities.
    folder : pathlib.Path
        Where ``robustness-<x>[-<y>].<format>`` and the ``.csv`` go.
    picks : pandas.DataFrame, optional
        :func:`explore.picks.picks`; their ranks are drawn on the map.
    formats : sequence of str, optional
        Picture formats: ``png``, ``svg``, ``pdf``.

    Returns
    -------
    (list of pathlib.Path, pathlib.Path)
        Pictures and CSV. Per point drawn, the CSV has the grid values,
        ``drops``, ``goal_probability`` with its 95 % Wilson interval
        ``goal_low``, ``goal_high`` [-], ``event_probability`` [-],
        ``flip_rate`` [-], ``mean_change`` (the value's spread, the
        metric's unit [-]), ``meets_target`` (every pooled cell does),
        ``margin_steps`` [grid steps] and ``chaotic``.
    """
    folder.mkdir(parents=True, exist_ok=True)
    settings = study.picks_settings
    keys = [k for k in (x, y) if k is not None]
    points = _points(cells, keys)
    base = folder / ("robustness-" + "-".join(keys))
    write_csv(points, base.with_suffix(".csv"))
    _, event_words = metric_words(study)
    goal = goal_words(study, event_words)
    target, chaos = settings.target, settings.chaotic_flip_rate
    fig, (left, right) = plt.subplots(1, 2, figsize=(12, 5.6) if y else (12, 4.4), constrained_layout=True)
    legend = []
    if y is not None:
        xs, ys, p = grid_of(points, x, y, "goal_probability")
        _, _, flips = grid_of(points, x, y, "flip_rate")
        mesh = left.pcolormesh(xs, ys, np.ma.masked_invalid(p), shading="nearest", vmin=0, vmax=1,
                               cmap=plt.get_cmap("cividis").with_extremes(bad="0.85"))
        fig.colorbar(mesh, ax=left).set_label(wrap(f"probability under tolerance that {goal}", 60), fontsize=8)
        top = max(0.5, float(np.nanmax(flips)) if np.isfinite(flips).any() else 0.5)
        mesh = right.pcolormesh(xs, ys, np.ma.masked_invalid(flips), shading="nearest", vmin=0, vmax=top,
                                cmap=plt.get_cmap("magma").with_extremes(bad="0.85"))
        fig.colorbar(mesh, ax=right).set_label("flip rate: outcome differs from the exact release [-]", fontsize=8)
        if _line(left, xs, ys, p, target, OKABE_ITO["sky"]):
            legend.append(plt.Line2D([], [], color=OKABE_ITO["sky"], lw=1.5,
                                     label=f"goal met in {target:.0%} of toleranced drops (the target)"))
        chaotic = points[points["chaotic"]]
        if len(chaotic):
            # marked cell by cell: a contour of a flip rate estimated from a
            # few dozen drops per cell would mostly trace that noise
            right.scatter(chaotic[COLUMN[x]], chaotic[COLUMN[y]], marker="x", s=14, lw=1.0,
                          color=OKABE_ITO["green"])
            legend.append(plt.Line2D([], [], ls="", marker="x", color=OKABE_ITO["green"],
                                     label=f"chaotic: outcome flips in more than {chaos:.0%} of drops"))
        if picks is not None and len(picks):
            # picks often sit in neighbouring cells: a dot on each cell, its
            # number set off in a direction that turns with the rank, on a leader
            for _, row in picks.iterrows():
                turn = np.radians(45 + 72 * (int(row["rank"]) - 1))
                where = (row[COLUMN[x]], row[COLUMN[y]])
                left.plot(*where, "o", ms=3, color="black")
                left.annotate(str(row["rank"]), where, xytext=(16 * np.cos(turn), 16 * np.sin(turn)),
                              textcoords="offset points", ha="center", va="center", fontsize=7,
                              fontweight="bold", color="black",
                              bbox={"boxstyle": "circle,pad=0.1", "fc": "white", "ec": "black", "lw": 0.6},
                              arrowprops={"arrowstyle": "-", "lw": 0.6, "color": "black", "shrinkA": 0,
                                          "shrinkB": 2})
            legend.append(plt.Line2D([], [], ls="", marker="o", mfc="white", mec="black", label="picks, by rank"))
        for ax in (left, right):
            ax.set_ylabel(label(y))
    else:
        xv = points[COLUMN[x]]
        left.fill_between(xv, points["goal_low"], points["goal_high"], color=OKABE_ITO["blue"], alpha=0.2, lw=0,
                          label="95 % Wilson interval")
        left.plot(xv, points["goal_probability"], color=OKABE_ITO["blue"], lw=2, label="probability under tolerance")
        left.axhline(target, color=OKABE_ITO["sky"], ls="--", label=f"target {target:.0%}")
        left.set_ylim(0, 1.02)
        left.set_ylabel(wrap(f"probability, {goal}", 50), fontsize=8)
        right.plot(xv, points["flip_rate"], color=OKABE_ITO["purple"], lw=2)
        right.axhline(chaos, color=OKABE_ITO["green"], ls="--", label=f"chaotic above {chaos:.0%}")
        right.set_ylim(0, 1.02)
        right.set_ylabel("flip rate: outcome differs from the exact release [-]", fontsize=8)
        left.legend(fontsize=8, frameon=False)
        right.legend(fontsize=8, frameon=False)
    for ax in (left, right):
        ax.set_xlabel(label(x))
    probability = points["goal_probability"].to_numpy()
    left.set_title("does the drop do what you want?" + (f" (goal: {flat_words(probability)})" if flat(probability)
                                                         else ""), fontsize=10, loc="left")
    right.set_title("do release errors change the outcome?", fontsize=10, loc="left")
    fig.suptitle(f"{study.name}: where the goal holds under release errors ({tolerance_text(study)})",
                 fontsize=11)
    if legend:
        fig.legend(handles=legend, loc="lower right", fontsize=8, ncol=len(legend), frameon=False)
    fig.text(0.01, 0.005, wrap(f"{study.tolerance.draws} toleranced drops per cell, each compared with the same "
                               "drop released exactly (same restitution, friction, ...). A cell is chaotic when its "
                               "outcome flips often, not when the metric's value moves.", 95),
             fontsize=7, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.07, 1, 0.93))
    return save_figure(fig, base, formats), base.with_suffix(".csv")
