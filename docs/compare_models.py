"""Where the rigid model can be trusted: its first and second rebound against the compliant model's.

The same drops, simulated twice: by the engine's default rigid model,
``two-ends`` (instantaneous impacts, Routh's method, one point at a time,
except near-flat landings, resolved on both ends at once) and by the
compliant model
(Hertz force with the calibrated damping and regularised Coulomb friction
at the body's ends, integrated through every contact; docs/physics.md
sections 7 and 7.1). The scenario is our own: 6 mm nylon pins with round
ends, dropped from 50 mm (centre) onto a steel plate, restitution 0.8 and
friction 0.3, over the release angle and the aspect ratio. The picture maps
the difference in the height of the first and of the second visible bounce
(impacts within 10 ms are one bounce), as a share of the release height; a
line marks 0.05. The published comparison of the two kinds of model for a
bouncing rod is Li, Chen, Tee, Liu & Ong, Am. J. Phys. 92(6):424 (2024).

Usage::

    python docs/compare_models.py                     # docs/img/model-difference.png
    python docs/compare_models.py --out /tmp/m.png --angles 10 --ratios 4
"""
from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np

from hopscape import sim
from hopscape.figures import save_figure
from hopscape.sim.materials import effective_modulus, material

ROOT = Path(__file__).resolve().parents[1]
DIAMETER = 0.006          # [m]
HEIGHT = 0.05             # [m] of the centre
WINDOW = 0.010            # [s] impacts closer than this are one visible bounce
TRUST = 0.05              # [-] a difference below this share of the release height is "the same answer"


def rebounds(model, shape, release, contact):
    """Heights of the first two visible bounces of the centre, as shares of its release height."""
    result = sim.simulate(shape, release, contact, impacts=6, model=model, peaks=("centre",))
    ratio = sim.group_bounces(result, WINDOW).ratio["centre"]
    return np.nan_to_num(ratio[:, :2], nan=0.0)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=ROOT / "docs" / "img" / "model-difference.png")
    parser.add_argument("--angles", type=int, default=46, help="release angles from 0 to 90 deg (default 46)")
    parser.add_argument("--ratios", type=int, default=12, help="aspect ratios from 1.5 to 7 (default 12)")
    args = parser.parse_args(argv)
    angles = np.linspace(0.0, 90.0, args.angles)
    ratios = np.linspace(1.5, 7.0, args.ratios)
    a, r = np.meshgrid(angles, ratios)
    shape = sim.Capsule.from_aspect_ratio(r.ravel(), DIAMETER, material("nylon").density)
    release = sim.Release(height=HEIGHT, angle=np.radians(a.ravel()))
    nylon, steel = material("nylon"), material("steel")
    e_star = float(effective_modulus(nylon.youngs_modulus, nylon.poisson, steel.youngs_modulus, steel.poisson))
    contact = sim.Contact(0.8, 0.3, contact_modulus=e_star)
    started = time.perf_counter()
    rigid = rebounds(sim.MODELS[0], shape, release, contact)
    middle = time.perf_counter()
    soft = rebounds("compliant", shape, release, contact)
    done = time.perf_counter()
    difference = np.abs(soft - rigid).reshape(len(ratios), len(angles), 2)
    print(f"{a.size} drops: rigid ({sim.MODELS[0]}) {middle - started:.2f} s, compliant {done - middle:.2f} s; "
          f"cells within {TRUST:g}: first bounce {np.mean(difference[..., 0] < TRUST):.0%}, "
          f"second {np.mean(difference[..., 1] < TRUST):.0%}")

    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(1, 2, figsize=(12, 4.8), sharey=True, constrained_layout=True)
    for k, ax in enumerate(axes):
        mesh = ax.pcolormesh(angles, ratios, difference[..., k], shading="nearest", cmap="magma_r", vmin=0,
                             vmax=max(0.2, float(np.nanmax(difference))))
        if difference[..., k].min() < TRUST < difference[..., k].max():
            ax.contour(angles, ratios, difference[..., k], levels=[TRUST], colors="white", linewidths=2.0)
            ax.contour(angles, ratios, difference[..., k], levels=[TRUST], colors="black", linewidths=1.0)
        ax.set_title(f"{'first' if k == 0 else 'second'} visible bounce", fontsize=10)
        ax.set_xlabel("release angle [deg] (0 lying flat, 90 upright)")
    axes[0].set_ylabel("aspect ratio (overall length / diameter) [-]")
    bar = fig.colorbar(mesh, ax=axes)
    bar.set_label("|compliant - rigid| bounce height / release height [-]")
    fig.suptitle("Where the rigid model can be trusted: 6 mm nylon pins from 50 mm onto steel (e 0.8, mu 0.3); "
                 f"black line: a difference of {TRUST:g} x the release height", fontsize=10)
    args.out.parent.mkdir(parents=True, exist_ok=True)
    save_figure(fig, args.out)
    print(f"wrote {args.out}")


if __name__ == "__main__":
    main()
