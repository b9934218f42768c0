"""Coverage of the fit's 95% intervals on synthetic tracks, and its speed.

Each trial films one engine drop (a 20 mm steel pin: capsule, 16 mm
between the cap centres, 2 mm cap radius) with restitution, friction,
release angle and height drawn at random, at the given frame rate with
Gaussian noise of 0.1 mm and 0.5 deg, and fits it. Reported per frame
rate: how often the 95% intervals (Jacobian/sandwich and bootstrap over
bounces) contain the truth, the largest errors, and the time per fit.

    python benchmarks/fit_coverage.py                 # 200 trials at 1,000 and 10,000 fps
    python benchmarks/fit_coverage.py --trials 20 --fps 1000
"""
from __future__ import annotations

import argparse
import json
import time

import numpy as np

from hopscape import sim
from hopscape.calibration.fit import fit_tracks
from hopscape.calibration.synthetic import synthetic_track
from hopscape.calibration.tracks import track_from_table
from hopscape.errors import InputError

PIN = dict(length=0.016, radius=0.002, density=7850)


def trial(fps, seed):
    """One synthetic drop and its fit: (truth, calibration, seconds)."""
    rng = np.random.default_rng([seed, int(fps)])
    truth = {"restitution": rng.uniform(0.4, 0.8), "friction": rng.uniform(0.1, 0.4),
             "angle": rng.uniform(15, 75), "height": rng.uniform(0.10, 0.20)}
    shape = sim.Capsule(**PIN)
    drop = synthetic_track(shape, sim.Release(height=truth["height"], angle=np.radians(truth["angle"])),
                           sim.Contact(truth["restitution"], truth["friction"]), fps=fps, impacts=10,
                           position_noise=1e-4, angle_noise=0.5, seed=seed)
    track = track_from_table(drop.track, f"synthetic-{seed}")
    start = time.perf_counter()
    calibration = fit_tracks([track], shape)
    return truth, calibration, time.perf_counter() - start


def run(fps, trials):
    inside = {"restitution": [], "friction": [], "restitution_bootstrap": [], "friction_bootstrap": []}
    errors = {"restitution": [], "friction": []}
    seconds, refused = [], 0
    for seed in range(trials):
        try:
            truth, cal, took = trial(fps, seed)
        except InputError:
            refused += 1
            continue
        est = cal.estimate
        seconds.append(took)
        e, mu = truth["restitution"], truth["friction"]
        inside["restitution"].append(est.restitution_low <= e <= est.restitution_high)
        high = est.friction_high if est.friction_high is not None else np.inf
        inside["friction"].append(est.friction_low <= mu <= high)
        inside["restitution_bootstrap"].append(est.restitution_bootstrap[0] <= e <= est.restitution_bootstrap[1])
        boot_high = est.friction_bootstrap[1] if np.isfinite(est.friction_bootstrap[1]) else np.inf
        inside["friction_bootstrap"].append(est.friction_bootstrap[0] <= mu <= boot_high)
        errors["restitution"].append(est.restitution - e)
        if est.friction is not None:
            errors["friction"].append(est.friction - mu)
    return {"fps": fps, "trials": trials, "fitted": len(seconds), "refused": refused,
            "coverage": {k: float(np.mean(v)) for k, v in inside.items()},
            "largest_error": {k: float(np.max(np.abs(v))) if v else None for k, v in errors.items()},
            "friction_identified": len(errors["friction"]),
            "fit_seconds_median": float(np.median(seconds)), "fit_seconds_max": float(np.max(seconds))}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--trials", type=int, default=200)
    parser.add_argument("--fps", type=float, nargs="+", default=[1000.0, 10000.0])
    args = parser.parse_args()
    for fps in args.fps:
        print(json.dumps(run(fps, args.trials)), flush=True)


if __name__ == "__main__":
    main()
