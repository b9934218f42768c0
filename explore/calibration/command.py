"""``hopscape fit``: restitution and friction from filmed drops.

Prints the fitted values with their intervals, the per-bounce table, the
gravity check and warnings; ``--json`` prints one object instead (the
names in :func:`hopscape.calibration.fit.summary`); ``--out DIR`` writes
``fit.json``, ``impacts.csv`` and the pictures; ``--into STUDY.yaml``
writes the study again beside it with the fitted contact.
"""
from __future__ import annotations

import json
import time
from pathlib import Path

import numpy as np

from ..cli_text import STRICT_HELP, report_warnings
from ..errors import InputError
from ..safety import SAFETY



def register(sub, handlers):
    """Add the ``fit`` command to the command line's sub-parsers and its handler to ``handlers``."""
    from hopscape import sim

    from ..options import finite, further_dimensions, law_help, positive_int
    from ..batch_contract import per_shape

    f = sub.add_parser("fit", help="calibrate restitution and friction from filmed drops (tracks)",
                       description="Track files (CSV or Parquet), one row per frame: time [s] (or frame with "
                       "--fps); x, y [m, y up, floor at 0] and angle [deg, from +x to the axis, "
                       "counter-clockwise], or the axis ends x1, y1, x2, y2. Empty cells: tracking lost. An "
                       "optional quality column is ignored.")
    f.add_argument("tracks", nargs="+", type=Path, help="track files of the same body on the same floor")
    f.add_argument("--shape", default="capsule", choices=list(sim.SHAPES), help="the filmed body's shape (default capsule)")
    f.add_argument("--radius", type=finite("--radius"), required=True, help=f"[m] {per_shape('radius')}")
    f.add_argument("--length", type=finite("--length"), default=None, help=f"[m] {per_shape('length')}")
    for name in further_dimensions():
        f.add_argument(f"--{name.replace('_', '-')}", type=finite(f"--{name}"), default=None,
                       help=f"[m] {per_shape(name)} (default: the shape's own)")
    f.add_argument("--aspect-ratio", type=finite("--aspect-ratio"), default=None,
                   help="overall length / diameter, instead of --length")
    f.add_argument("--density", type=finite("--density"), default=1200.0,
                   help="[kg/m^3] (default 1200; the fit does not depend on it, the energies do)")
    f.add_argument("--mass", type=finite("--mass"), default=None, help="[kg] total mass, instead of --density")
    f.add_argument("--law", default="energetic", choices=sim.LAWS, help=law_help())
    f.add_argument("--fps", type=finite("--fps"), default=None, help="[1/s] frame rate, for tracks with frame only")
    f.add_argument("--scale", type=finite("--scale"), default=None, help="[pixels per metre] for pixel tracks")
    f.add_argument("--y-down", action="store_true", help="image rows grow downwards (y and angle mirrored)")
    f.add_argument("--floor-y", type=finite("--floor-y"), default=None,
                   help="the floor line, in the track's own units (pixels with --scale)")
    f.add_argument("--columns", default=None, help="map the track's column names: time=t,x=X,... ")
    f.add_argument("--bootstrap", type=positive_int("--bootstrap", 0, 100_000), default=200,
                   help="resamples over bounces for the bootstrap interval (default 200; 0: none)")
    f.add_argument("--seed", type=positive_int("--seed", 0), default=0, help="seed of the bootstrap (default 0)")
    f.add_argument("--out", type=Path, default=None, help="folder for fit.json, impacts.csv and the pictures")
    f.add_argument("--into", type=Path, default=None,
                   help="a study file: write NAME-fitted.yaml beside it with the fitted contact")
    f.add_argument("--json", action="store_true", help="print one JSON object")
    f.add_argument("--strict", action="store_true", help=STRICT_HELP)
    handlers.update(fit=cmd_fit)


def _shape(args):
    from hopscape import sim
    from hopscape.sim.limits import MASS

    from ..options import further_dimensions

    try:
        if args.aspect_ratio is not None and args.length is not None:
            raise ValueError("give --length or --aspect-ratio, not both")
        cls = sim.SHAPES[args.shape]
        if args.aspect_ratio is not None:
            shape = cls.from_aspect_ratio(args.aspect_ratio, 2 * args.radius, args.density)
        else:
            further = {name: getattr(args, name) for name in further_dimensions()}
            shape = sim.make_shape(args.shape, length=args.length or 0.0, radius=args.radius, density=args.density,
                                   **further)
        if args.mass is not None:
            shape = shape.with_mass(MASS.check("--mass", args.mass))
    except ValueError as exc:
        raise InputError(str(exc)) from None
    return shape


def _table(calibration):
    """The terminal text: values, per-bounce table, gravity."""
    est = calibration.estimate
    lines = [f"law: {calibration.law};  {len(calibration.bounces)} bounce(s) in {len(calibration.tracks)} track(s), "
             f"{int(calibration.bounces['resolved'].sum())} resolved impact(s)"]
    def bootstrap(low_high):
        if not np.all(np.isfinite(low_high)):
            return ""
        return f"   (bootstrap over bounces: {low_high[0]:.4f} .. {low_high[1]:.4f})"
    lines.append(f"restitution  {est.restitution:.4f}   95%: {est.restitution_low:.4f} .. {est.restitution_high:.4f}"
                 + bootstrap(est.restitution_bootstrap))
    if est.friction is not None:
        lines.append(f"friction     {est.friction:.4f}   95%: {est.friction_low:.4f} .. {est.friction_high:.4f}"
                     + bootstrap(est.friction_bootstrap))
    else:
        lines.append(f"friction     not identifiable: no bounce slips; at least {est.friction_low:.3g} (95%)")
    lines.append(f"fit quality: reduced chi-square {est.reduced_chi2:.3g} (1: the model within the frame noise)")
    lines.append(f"gravity from the flights: {calibration.gravity:.4f} +- {calibration.gravity_sd:.2g} m/s^2 "
                 f"(standard 9.80665)")
    lines.append("")
    header = (f"{'track':>5} {'time ms':>9} {'kind':>7} {'angle':>6} {'e meas':>7} {'+-':>6} {'e model':>7} "
              f"{'u_t before':>10} {'u_t after':>10} {'slip':>8} {'KE lost %':>9} {'fps needed':>10}")
    lines.append(header)
    for _, row in calibration.bounces.iterrows():
        before = row["translational_before"] + row["rotational_before"]
        after = row["translational_after"] + row["rotational_after"]
        model = row["model_restitution"]
        fps = row["fps_to_resolve"]
        lines.append(f"{row['track']:>5} {row['time'] * 1e3:9.2f} {'impact' if row['resolved'] else 'merged':>7} "
                     f"{row['impact_angle']:6.1f} {row['restitution_apparent']:7.3f} "
                     f"{1.96 * row['restitution_apparent_sd']:6.3f} "
                     f"{'' if not np.isfinite(float(model)) else f'{float(model):.3f}':>7} "
                     f"{row['u_t_before']:10.3f} {row['u_t_after']:10.3f} {row['slip']:>8} "
                     f"{100 * (1 - after / before):9.1f} "
                     f"{'' if not np.isfinite(float(fps)) else f'{float(fps):,.0f}':>10}"
                     + ("" if row["used"] else "  (not fitted)"))
    lines.append("e meas: apparent restitution of the contact point, -u_n after / u_n before (95%); "
                 "u_t [m/s]: tangential velocity of the contact point; fps needed: the frame rate that would "
                 "resolve a merged bounce's own impacts")
    return "\n".join(lines)


def cmd_fit(args):
    """``hopscape fit``: calibrate, print, write what was asked."""
    from . import compare, export, fit, tracks as track_io

    if args.out is not None and args.out.exists() and not args.out.is_dir():
        raise InputError(f"--out {args.out} is a file; the results go into a folder (nothing was written)")
    if args.into is not None:
        if not args.into.is_file():
            raise InputError(f"--into {args.into}: no such study file")
        export.study_target(args.into)  # refused before the fit, not after
    shape = _shape(args)
    # millimetres typed as metres make every frame "below the floor": say so first, as drop does
    from ..options import further_dimensions
    from ..plausibility import drop_warnings
    sizes = {name: getattr(args, name, None) for name in ("length", "radius", "density", *further_dimensions())}
    report_warnings((f"--{name.replace('_', '-')}: {message}" for name, _, message in
                     drop_warnings(shape, {k: v for k, v in sizes.items() if v is not None})), args.strict)
    columns = track_io.parse_columns(args.columns)
    tracks = [track_io.read_track(path, fps=args.fps, scale=args.scale, y_down=args.y_down, floor_y=args.floor_y,
                                  columns=columns) for path in args.tracks]
    started = time.perf_counter()
    calibration = fit.fit_tracks(tracks, shape, law=args.law, bootstrap=args.bootstrap, seed=args.seed)
    elapsed = time.perf_counter() - started
    result = fit.summary(calibration)
    speed = float(np.median(np.abs(calibration.bounces["u_n_before"])))
    result["compliant"] = export.compliant_parameters(calibration.estimate.restitution, speed)
    result["fit_seconds"] = elapsed
    report_warnings(calibration.warnings, args.strict)
    comparisons = [compare.compare(calibration, number) for number in range(len(tracks))]
    result["model_check"] = [
        {"track": calibration.tracks[n].name, "follows_until_s": c.follows_until,
         "flight_rms_height_m": [float(v) for v in c.flight_rms_y],
         "flight_rms_angle_deg": [float(v) for v in np.degrees(c.flight_rms_angle)]}
        for n, c in enumerate(comparisons)]
    if args.out is not None:
        _write_outputs(args.out, calibration, result, comparisons)
    if args.into is not None:
        result["study"] = str(export.fitted_study(args.into, calibration))
    if args.json:
        print(json.dumps(result))
        return 0
    print(_table(calibration))
    for check in result["model_check"]:
        rms_y, rms_a = check["flight_rms_height_m"], check["flight_rms_angle_deg"]
        if rms_y:
            print(f"\nmodel check, {check['track']}: each flight predicted from the one before misses the track by "
                  f"{1e3 * max(rms_y):.3g} mm and {max(rms_a):.3g} deg at most (root mean square per flight); one "
                  f"run from the first flight follows it until {check['follows_until_s'] * 1e3:.0f} ms")
    compliant = result["compliant"]
    print(f"\nfor compliant-contact engines (normal approach speed {speed:.3g} m/s):")
    for name, part in compliant["hertz_damping_factor"].items():
        print(f"  Hertz + damping factor ({part['source']}): alpha = {part['alpha_s_per_m']:.4g} s/m "
              f"(one integrated impact gives e = {part['check_restitution']:.3f})")
    dash = compliant["linear_damping_ratio"]
    print(f"  linear spring-dashpot: damping ratio {dash['zeta']:.4f} "
          f"(integrated: e = {dash['check_restitution']:.4f})")
    print(f"\nfit took {elapsed:.2f} s")
    if args.out is not None:
        print(f"written to {args.out}: fit.json, impacts.csv and pictures")
    if "study" in result:
        print(f"study with the fitted contact: {result['study']}")
    print("\nSafety: " + SAFETY)
    return 0


def _write_outputs(folder, calibration, result, comparisons):
    """fit.json, impacts.csv and the pictures into ``folder``."""
    from ..files import write_csv, write_text
    from . import pictures
    from .fit import bounce_table

    folder.mkdir(parents=True, exist_ok=True)
    write_text(folder / "fit.json", json.dumps(result, indent=2))
    write_csv(bounce_table(calibration), folder / "impacts.csv")
    many = len(calibration.tracks) > 1
    for number in range(len(calibration.tracks)):
        suffix = f"-{number + 1}" if many else ""
        pictures.energy(calibration, number, folder / f"energy{suffix}.png")
        pictures.track_against_model(calibration, number, comparisons[number], folder / f"model{suffix}.png")
    pictures.restitution_by_angle(calibration, folder / "restitution-angle.png")
    pictures.residuals(calibration, folder / "residuals.png")
