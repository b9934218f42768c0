"""Pictures of one drop: strobe, energy exchange, bounce heights.

Colour choices are colour-blind safe (viridis for time, the Okabe-Ito
palette for lines).
"""
from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from hopscape import sim  # noqa: E402

from .figures import OKABE_ITO, save_figure  # noqa: E402
from .metric_kinds import POINT_WORDS  # noqa: E402

MM = 1e3
MS = 1e3
MJ = 1e3


def outline(profile, x, y, theta, points=90):
    """Closed outline of a body (:func:`sim.geometry.outline`) with its
    centre at ``(x, y)`` and its axis at ``theta``. [m]"""
    bx, by = sim.geometry.outline(profile, points)
    c, s = np.cos(theta), np.sin(theta)
    return x + c * bx - s * by, y + s * bx + c * by


def strobe(result, drop=0, frames=26, path=None, title=None):
    """Outlines of the body at regular times, shaded by time."""
    count = int(result.count[drop])
    end = float(result.time[drop, count - 1] + result.flight[drop, count - 1]) if count else 0.3
    times = np.linspace(0, end, frames)
    hist = sim.history(result, drop, times)
    profile = tuple(p[drop] for p in result.profile)
    height = max(float(np.nanmax(hist["top"])), 1e-3)
    travel = float(np.ptp(hist["x"]))
    size = 2 * float(sim.geometry.depth_range(*profile)[1])
    # spread the outlines sideways by time when the body barely travels, so
    # that they do not pile up; the axis label says so
    wide = max(2.5 * height, 3 * size)
    spread = max(0.0, (wide - travel) / max(end, 1e-9)) if travel < wide else 0.0
    fig, ax = plt.subplots(figsize=(9, 5), constrained_layout=True)
    cmap = plt.get_cmap("viridis")
    for i, t in enumerate(times):
        ox, oy = outline(profile, hist["x"][i] + spread * t, hist["y"][i], hist["theta"][i])
        ax.fill(ox * MM, oy * MM, color=cmap(i / max(frames - 1, 1)), alpha=0.55, lw=0.8, ec="k")
    ax.plot((hist["x"] + spread * times) * MM, hist["y"] * MM, color="0.4", lw=0.8, ls=":")
    for j in range(count):
        t = result.time[drop, j]
        ax.plot((result.x[drop, j] + spread * t) * MM, 0, marker="v", color=OKABE_ITO["red"], ms=9, zorder=5)
    lo, hi = ax.get_xlim()
    ax.axhspan(-0.05 * height * MM, 0, color="0.75")
    ax.axhline(0, color="k", lw=1.2)
    ax.axhline(result.release_height("centre")[drop] * MM, color=OKABE_ITO["blue"], lw=1, ls="--",
               label="release height of the centre")
    ax.set_aspect("equal")
    ax.set_ylim(-0.05 * height * MM, 1.08 * height * MM)
    if spread > 0:
        ax.set_xlabel(f"horizontal position + {spread * MM:.0f} mm/s x time [mm] (spread by time for legibility)")
    else:
        ax.set_xlabel("horizontal position [mm]")
    ax.set_ylabel("height above the floor [mm]")
    sm = plt.cm.ScalarMappable(cmap=cmap, norm=plt.Normalize(0, end * MS))
    fig.colorbar(sm, ax=ax, label="time since release [ms]", shrink=0.8)
    ax.plot([], [], marker="v", ls="none", color=OKABE_ITO["red"], label="impact")
    ax.legend(loc="upper right", fontsize=8)
    ax.set_title(title or "Strobe: the body every %.1f ms" % (end / max(frames - 1, 1) * MS))
    return _finish(fig, path)


def energy(result, drop=0, path=None, samples=2000):
    """Translational, rotational, potential and total energy over time."""
    count = int(result.count[drop])
    end = float(result.time[drop, count - 1] + result.flight[drop, count - 1]) if count else 0.3
    impact_times = result.time[drop, :count]
    # sample densely and include both sides of every impact
    times = np.unique(np.concatenate([np.linspace(0, end, samples), impact_times - 1e-9, impact_times]))
    hist = sim.history(result, drop, times)
    fig, ax = plt.subplots(figsize=(9, 4.5), constrained_layout=True)
    # on an inclined floor the potential counts the along-floor drop too, and
    # falls below zero downhill (sim.DropResult.energy_before)
    tilted = bool(result.gravity_along[drop] != 0)
    ax.plot(times * MS, hist["potential"] * MJ, color=OKABE_ITO["blue"],
            label="potential (height and distance downhill)" if tilted else "potential (centre height)")
    ax.plot(times * MS, hist["translational"] * MJ, color=OKABE_ITO["orange"], label="translational")
    ax.plot(times * MS, hist["rotational"] * MJ, color=OKABE_ITO["green"], label="rotational")
    ax.plot(times * MS, hist["total"] * MJ, color="k", lw=1.6, label="total")
    for i, t in enumerate(impact_times):
        ax.axvline(t * MS, color=OKABE_ITO["red"], lw=0.8, ls=":", label="impact" if i == 0 else None)
    ax.set_xlabel("time since release [ms]")
    ax.set_ylabel("energy [mJ]")
    ax.set_xlim(0, end * MS)
    ax.set_ylim(bottom=min(0.0, float(np.nanmin(hist["potential"])) * MJ * 1.05))
    ax.legend(fontsize=8, loc="upper right")
    ax.set_title("Energy exchange: impacts move energy between falling, spin and lift")
    return _finish(fig, path)


POINT = POINT_WORDS


def bounce_heights(result, bounces, drop=0, reference="centre", path=None):
    """Height of each bounce against the release height and the energy bound."""
    heights = bounces.height[reference][drop]
    count = int(bounces.count[drop])
    release = float(bounces.release_height[reference][drop])
    fig, ax = plt.subplots(figsize=(7, 4.5), constrained_layout=True)
    idx = np.arange(1, count + 1)
    ratios = heights[:count] / release
    colors = [OKABE_ITO["orange"] if r > 1 else OKABE_ITO["sky"] for r in ratios]
    ax.bar(idx, heights[:count] * MM, color=colors, edgecolor="k")
    for i, r in zip(idx, ratios):
        ax.annotate(f"{r:.2f}", (i, heights[i - 1] * MM), ha="center", va="bottom", fontsize=8)
    ax.axhline(release * MM, color=OKABE_ITO["blue"], ls="--", label=f"release height of the {POINT[reference]} (ratio 1)")
    # no energy bound on an inclined floor (NaN): nothing to draw
    bound = float(result.energy_bound[drop]) if reference == "centre" else np.nan
    if np.isfinite(bound):
        ax.axhline(result.energy_bound[drop] * MM, color=OKABE_ITO["red"], ls=":",
                   label="energy bound: highest the centre could ever rise")
    import matplotlib.patches as mpatches
    handles, _ = ax.get_legend_handles_labels()
    handles += [mpatches.Patch(color=OKABE_ITO["orange"], label="above the release height"),
                mpatches.Patch(color=OKABE_ITO["sky"], label="below the release height")]
    ax.set_xticks(idx)
    ax.set_xlabel(f"bounce (impacts closer than {bounces.merge_within * MS:g} ms merged)")
    ax.set_ylabel(f"peak height of the {POINT[reference]} [mm]")
    ax.set_title("Bounce heights (numbers: rebound ratio)")
    ax.legend(handles=handles, fontsize=8, loc="upper right")
    ax.set_ylim(0, max(release, float(np.nanmax(heights[:count])) if count else release,
                       bound if np.isfinite(bound) else 0) * MM * 1.15)
    return _finish(fig, path)


def _finish(fig, path):
    if path is not None:
        save_figure(fig, path)
    return fig
