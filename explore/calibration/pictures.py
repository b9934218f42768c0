"""Pictures of a calibration: where the energy goes at each bounce, the
model against the track, restitution against impact angle, residuals.

Colours from :data:`hopscape.figures.OKABE_ITO`; files through
:func:`hopscape.figures.save_figure` (atomic).
"""
from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from pathlib import Path  # noqa: E402

from hopscape.sim.flight import GRAVITY  # noqa: E402

from ..figures import OKABE_ITO, save_figure  # noqa: E402


def _label(track):
    """The track's file name without its folder (titles stay one line wide)."""
    return Path(track.name).name


def _bounce_lines(ax, bounces):
    for _, row in bounces.iterrows():
        ax.axvspan(row["time"] * 1e3, max(row["time_after"], row["time"] + 1e-4) * 1e3,
                   color=OKABE_ITO["black"], alpha=0.25 if row["resolved"] else 0.12, lw=0.8)


def energy(calibration, number, path):
    """Measured energy of track ``number`` over time, from the fitted flights:
    translational, rotational, potential and total [mJ], bounces shaded."""
    track, flights, shape = calibration.tracks[number], calibration.flights[number], calibration.shape
    m, inertia = float(shape.mass), float(shape.inertia)
    fig, ax = plt.subplots(figsize=(9, 4.6), constrained_layout=True)
    parts = (("translational", OKABE_ITO["blue"]), ("rotational", OKABE_ITO["orange"]),
             ("potential", OKABE_ITO["green"]), ("total", OKABE_ITO["black"]))
    for k in range(flights.count):
        t = np.linspace(track.time[flights.first[k]], track.time[flights.last[k]], 60)
        s = flights.state(k, t)
        values = {"translational": 0.5 * m * (s["vx"] ** 2 + s["vy"] ** 2),
                  "rotational": 0.5 * inertia * s["spin"] ** 2, "potential": m * GRAVITY * s["y"]}
        values["total"] = sum(values.values())
        for name, colour in parts:
            ax.plot(t * 1e3, values[name] * 1e3, color=colour, lw=2.2 if name == "total" else 1.4,
                    label=name if k == 0 else None)
    _bounce_lines(ax, calibration.bounces[calibration.bounces["track"] == number])
    ax.set_xlabel("time [ms]")
    ax.set_ylabel(f"energy [mJ] (body of {m * 1e3:.3g} g)")
    ax.set_title(f"{_label(track)}: measured energy in each flight; grey bands: bounces (dark: one impact, light: "
                 "merged)\nthe total's steps are what each bounce dissipates; rotational jumps show spin made "
                 "or lost", fontsize=9.5)
    ax.legend(loc="upper right", fontsize=8)
    ax.grid(alpha=0.3)
    return save_figure(fig, path)


def track_against_model(calibration, number, comparison, path):
    """Centre height and angle of track ``number``: measured frames, the
    model started at each flight before, and the whole drop simulated."""
    track = calibration.tracks[number]
    t = track.time * 1e3
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(9, 6.4), sharex=True, constrained_layout=True)
    top.plot(t, track.y * 1e3, ".", ms=2.5, color=OKABE_ITO["black"], label="measured")
    top.plot(t, comparison.next_y * 1e3, color=OKABE_ITO["orange"], lw=1.6, label="model from the flight before")
    top.plot(t, comparison.whole_y * 1e3, "--", color=OKABE_ITO["blue"], lw=1.1, label="model, whole drop")
    bottom.plot(t, np.degrees(track.angle), ".", ms=2.5, color=OKABE_ITO["black"])
    bottom.plot(t, np.degrees(comparison.next_angle), color=OKABE_ITO["orange"], lw=1.6)
    bottom.plot(t, np.degrees(comparison.whole_angle), "--", color=OKABE_ITO["blue"], lw=1.1)
    for ax in (top, bottom):
        # dotted black: the palette's vermillion reads as the orange model line
        ax.axvline(comparison.follows_until * 1e3, color=OKABE_ITO["black"], ls=":", lw=1.2)
        ax.grid(alpha=0.3)
    top.set_ylabel("centre height [mm]")
    bottom.set_ylabel("axis angle [deg]")
    bottom.set_xlabel("time [ms]")
    top.legend(loc="upper right", fontsize=8)
    top.set_title(f"{_label(track)}: does the fitted model reproduce the drop? Orange: each flight predicted from the "
                  f"one before;\nblue dashed: one run from the first flight, following the track until "
                  f"{comparison.follows_until * 1e3:.0f} ms (dotted line; later impacts are chaotic)", fontsize=9.5)
    return save_figure(fig, path)


def restitution_by_angle(calibration, path):
    """Apparent restitution of each bounce against the axis' inclination at
    impact, with the model's value for each resolved impact."""
    b = calibration.bounces
    est = calibration.estimate
    fig, ax = plt.subplots(figsize=(7.5, 4.8), constrained_layout=True)
    for resolved, style, words in ((True, "o", "one impact"), (False, "s", "merged bounce")):
        part = b[b["resolved"] == resolved]
        if part.empty:
            continue
        ax.errorbar(part["impact_angle"], part["restitution_apparent"], yerr=1.96 * part["restitution_apparent_sd"],
                    fmt=style, color=OKABE_ITO["blue"], mfc=OKABE_ITO["blue"] if resolved else "white",
                    capsize=2, label=f"measured, {words} (95%)")
    part = b[b["resolved"]]
    ax.plot(part["impact_angle"], part["model_restitution"].astype(float), "x", color=OKABE_ITO["orange"],
            ms=7, label=f"model at the fit ({calibration.law} law)")
    ax.axhspan(est.restitution_low, est.restitution_high, color=OKABE_ITO["green"], alpha=0.2)
    ax.axhline(est.restitution, color=OKABE_ITO["green"], label=f"fitted restitution {est.restitution:.3f}")
    ax.set_xlabel("axis inclination to the floor at impact [deg]")
    ax.set_ylabel("apparent restitution of the contact point [-]")
    ax.set_xlim(-2, 92)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title("Does restitution change with the impact angle? (it does for dropped bars: Stoianovici & Hurmuzlu,"
                 "\nJ. Appl. Mech. 63:307, 1996) A trend the model's crosses do not follow calls for more drops "
                 "per angle", fontsize=9.5)
    return save_figure(fig, path)


def residuals(calibration, path):
    """Residuals of every fitted flight: centre [mm] and angle [deg] against time."""
    n = len(calibration.tracks)
    fig, axes = plt.subplots(2, n, figsize=(max(7, 4.5 * n), 5.4), squeeze=False, constrained_layout=True)
    for number, (track, flights) in enumerate(zip(calibration.tracks, calibration.flights)):
        for k in range(flights.count):
            frames = slice(flights.first[k], flights.last[k] + 1)
            s = flights.state(k, track.time[frames])
            t = track.time[frames] * 1e3
            axes[0, number].plot(t, (track.x[frames] - s["x"]) * 1e3, ".", ms=2, color=OKABE_ITO["sky"],
                                 label="x" if k == 0 else None)
            axes[0, number].plot(t, (track.y[frames] - s["y"]) * 1e3, ".", ms=2, color=OKABE_ITO["blue"],
                                 label="y" if k == 0 else None)
            axes[1, number].plot(t, np.degrees(track.angle[frames] - s["angle"]), ".", ms=2,
                                 color=OKABE_ITO["orange"])
        axes[0, number].set_title(f"{_label(track)}: noise {flights.position_noise * 1e3:.3g} mm, "
                                  f"{np.degrees(flights.angle_noise):.3g} deg", fontsize=9)
        axes[0, number].set_ylabel("centre residual [mm]")
        axes[1, number].set_ylabel("angle residual [deg]")
        axes[1, number].set_xlabel("time [ms]")
        axes[0, number].legend(fontsize=8, loc="upper right")
        for ax in axes[:, number]:
            ax.grid(alpha=0.3)
    fig.suptitle("Flight-fit residuals: they should scatter evenly about 0;\na drift or a bend means a hidden "
                 "impact, a tilted camera or lens distortion", fontsize=9.5)
    return save_figure(fig, path)
