"""The ``hopscape`` command line.

Exit codes: 0 success, 1 other failure, 2 bad input, 130 interrupted.
Bad input is reported on one line per problem, never as a traceback.
"""
from __future__ import annotations

import argparse
import json
import math
import os
import sys
import time
from pathlib import Path

# numpy, the kernel and everything else are imported inside main(), so that
# a Ctrl-C while they load ends with "interrupted" and exit 130 like any other
from .cli_text import STRICT_HELP, report_warnings
from .defaults import IMPACTS
from .errors import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_INTERRUPTED, EXIT_OK, InputError
from .files import refuse_overwriting_input
from .safety import SAFETY
from .options import (contact_options, declared_int, finite, further_dimensions, law_help, merge_window_of,
                      merge_window_options, model_help, positive_int, table_option)



class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit code 2."""

    def error(self, message):
        raise InputError(message if self.prog == "hopscape" else f"{self.prog.split()[-1]}: {message}")


#: Most drops ``hopscape bench`` times at once (its result is held in memory:
#: 10^6 drops peak near 500 MB).
BENCH_DROPS = 2_000_000


def _contact_loads(args, shape, result):
    """Per-impact contact outputs of a drop (NaN without materials) and the
    settings they came from."""
    import numpy as np

    from hopscape.sim.contact_load import impact_loads
    from hopscape.sim.hertz import rim_edge_default
    from .batch_contract import CONTACT_COLUMNS
    from .contact_inputs import single_settings

    given = {name: getattr(args, name) for name in CONTACT_COLUMNS}
    e_star, edge, breakage = _user_value_errors(lambda: single_settings(given))
    edge = rim_edge_default(shape.profile) if np.isnan(edge) else edge
    return impact_loads(result, e_star, edge, None if np.isnan(breakage[0]) else breakage), e_star, edge


def build_parser():
    """The ``hopscape`` argument parser; choices and help come from the declarations in :mod:`sim`."""
    from hopscape import sim
    from hopscape.sim.limits import FRICTION, RESTITUTION
    from .batch_contract import per_shape
    from .quantities import QUANTITIES

    parser = _Parser(prog="hopscape", description="Design exploration for rigid shapes that can "
                     "rebound above their release height.")
    from importlib.metadata import PackageNotFoundError, version
    try:
        installed = version("hopscape")
    except PackageNotFoundError:   # run from a source tree that was never installed
        installed = "unknown (not installed)"
    parser.add_argument("--version", action="version", version=f"hopscape {installed}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    # --- drop --------------------------------------------------------
    d = sub.add_parser("drop", help="simulate one drop, print its impacts and bounces, draw pictures")
    d.add_argument("--shape", default="capsule", choices=list(sim.SHAPES), help="body shape (default capsule)")
    d.add_argument("--length", type=finite("--length"), default=None,
                   help=f"[m] {per_shape('length')} (default 0.014)")
    d.add_argument("--radius", type=finite("--radius"), default=None,
                   help=f"[m] {per_shape('radius')} (default 0.0035)")
    for name in further_dimensions():
        d.add_argument(f"--{name.replace('_', '-')}", type=finite(f"--{name}"), default=None,
                       help=f"[m] {per_shape(name)} (default: the shape's own)")
    d.add_argument("--aspect-ratio", type=finite("--aspect-ratio"), default=None,
                   help="overall length / diameter, instead of --length (uses --radius)")
    d.add_argument("--density", type=finite("--density"), default=1200.0, help="[kg/m^3] (default 1200)")
    d.add_argument("--mass", type=finite("--mass"), default=None, help="[kg] total mass, instead of --density")
    d.add_argument("--restitution", type=finite("--restitution"), default=0.8, help=f"[-] {RESTITUTION.describe()} (default 0.8)")
    d.add_argument("--friction", type=finite("--friction"), default=0.3, help=f"[-] Coulomb, {FRICTION.describe()} (default 0.3)")
    d.add_argument("--law", default="energetic", choices=sim.LAWS, help=law_help())
    d.add_argument("--model", default=sim.MODELS[0], choices=sim.MODELS, help=model_help())
    contact_options(d)
    table_option(d)
    d.add_argument("--height", type=finite("--height"), default=0.3, help="[m] release height (default 0.3)")
    d.add_argument("--height-of", default="centre", choices=["centre", "bottom"],
                   help="which point --height is measured to (default centre)")
    d.add_argument("--angle", type=finite("--angle"), default=30.0,
                   help="[deg] from horizontal to the axis, counter-clockwise (default 30)")
    d.add_argument("--spin", type=finite("--spin"), default=0.0, help="[rad/s] counter-clockwise (default 0)")
    d.add_argument("--vx", type=finite("--vx"), default=0.0, help="[m/s] (default 0)")
    d.add_argument("--vy", type=finite("--vy"), default=0.0, help="[m/s] (default 0)")
    d.add_argument("--floor-angle", type=finite("--floor-angle"), default=0.0,
                   help="[deg] floor inclination, positive where the floor falls towards +x, "
                   f"{QUANTITIES['floor_angle'].allowed.describe()} (default 0: level); height, angle, vx and "
                   "vy are then in floor coordinates, heights normal to the floor")
    d.add_argument("--impacts", type=declared_int("--impacts", "impacts"), default=IMPACTS,
                   help=f"impacts to follow (default {IMPACTS}, as in batch and studies)")
    merge_window_options(d)
    d.add_argument("--reference", default="centre", choices=sim.REFERENCES,
                   help="point whose height the rebound ratio compares (default centre)")
    d.add_argument("--csv", type=Path, default=None, help="write the impact table to this CSV file")
    d.add_argument("--out", type=Path, default=Path("hopscape-drop"),
                   help="folder for the pictures (default hopscape-drop)")
    d.add_argument("--no-plots", action="store_true", help="print only, draw nothing")
    d.add_argument("--strict", action="store_true", help=STRICT_HELP)

    # --- batch -------------------------------------------------------
    from .batch_contract import INPUT_COLUMNS
    columns = "; ".join(f"{c} [{u}]" + (" (optional)" if d is not None else "")
                        for c, (u, d) in INPUT_COLUMNS.items())
    b = sub.add_parser("batch", help="many drops from a CSV or Parquet table",
                       description="Input columns, one row per drop: " + columns + ". Heights are of the centre "
                       "of mass. Output: one row per drop and impact (see README, 'Batch tables').")
    b.add_argument("drops", type=Path, help="input table, one row per drop (.csv or .parquet)")
    b.add_argument("--out", type=Path, required=True, help="output table (.csv or .parquet)")
    b.add_argument("--impacts", type=declared_int("--impacts", "impacts"), default=IMPACTS,
                   help=f"impacts per drop (default {IMPACTS}, as in drop and studies)")
    b.add_argument("--law", default="energetic", choices=sim.LAWS,
                   help="law for rows without a law column value (default energetic): " + law_help())
    b.add_argument("--model", default=sim.MODELS[0], choices=sim.MODELS,
                   help=model_help() + "; each row its own materials")
    merge_window_options(b)
    table_option(b, " column of every row")
    b.add_argument("--strict", action="store_true", help=STRICT_HELP)

    # --- bench -------------------------------------------------------
    n = sub.add_parser("bench", help="time the kernel on the benchmark population")
    n.add_argument("--drops", type=positive_int("--drops", 1, BENCH_DROPS), default=200_000, help="drops to time (default 200000)")
    n.add_argument("--jobs", type=declared_int("--jobs", "jobs"), default=1, help="worker processes (default 1)")
    n.add_argument("--repeat", type=positive_int("--repeat"), default=3, help="timed runs; the best is reported (default 3)")
    n.add_argument("--json", action="store_true", help="print one JSON object")

    from . import commands  # noqa: F401  (study commands register themselves)
    commands.register(sub)
    # the rig and calibration commands: plan -> film -> track -> fit
    from .rig.command import register as register_plan
    from .video.command import register as register_track
    from .calibration.command import register as register_fit
    for register in (register_plan, register_track, register_fit):
        register(sub, commands.HANDLERS)
    return parser


def main(argv=None):
    """Run the ``hopscape`` command with ``argv``; return the exit code
    (0 success, 1 other failure, 2 bad input, 130 interrupted)."""
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        handler = {"drop": cmd_drop, "batch": cmd_batch, "bench": cmd_bench}.get(args.command)
        if handler is None:
            from . import commands
            handler = commands.HANDLERS[args.command]
        return handler(args) or EXIT_OK
    except InputError as exc:
        for line in exc.messages:
            print(f"hopscape: error: {line}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        # from here on the process only exits: a second interrupt while
        # workers and threads are torn down must not turn exit 130 into a
        # traceback or a death by SIGINT (seen under load: 1 in 3 tries)
        import signal
        signal.signal(signal.SIGINT, signal.SIG_IGN)
        print("hopscape: interrupted; finished work is kept", file=sys.stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:  # output piped into `head` and the like
        sys.stderr.close()
        return EXIT_OK
    except SystemExit as exc:  # --help
        return exc.code if isinstance(exc.code, int) else EXIT_OK
    except Exception as exc:  # noqa: BLE001
        if os.environ.get("HOPSCAPE_DEBUG"):
            raise
        print(f"hopscape: failed: {type(exc).__name__}: {exc} (set HOPSCAPE_DEBUG=1 for the traceback)",
              file=sys.stderr)
        return EXIT_FAILURE


def _user_value_errors(call):
    """Run ``call``; a ValueError from the physics is bad input."""
    try:
        return call()
    except ValueError as exc:
        raise InputError(str(exc)) from None


def cmd_drop(args):
    """``hopscape drop``: one drop, its impacts and bounces as tables, three pictures."""
    import numpy as np

    from .quantities import radians_within_one_turn
    from hopscape import sim
    from hopscape.sim.limits import FRICTION, MASS, RESTITUTION
    from .batch import impact_table
    from .quantities import QUANTITIES
    from .report_text import drop_report

    merge_window = merge_window_of(args)
    # where the outputs go is checked before anything is simulated
    if args.csv is not None:
        refuse_overwriting_input(args.csv, option="--csv")
    if not args.no_plots and args.out.exists() and not args.out.is_dir():
        raise InputError(f"--out {args.out} is a file; the pictures go into a folder (nothing was written)")
    radius = 0.0035 if args.radius is None else args.radius

    def body():
        if args.aspect_ratio is not None and args.length is not None:
            raise ValueError("give --length or --aspect-ratio, not both")
        length = 0.014 if args.length is None else args.length
        further = {name: getattr(args, name) for name in further_dimensions()}
        cls = sim.SHAPES[args.shape]
        if args.aspect_ratio is not None:
            shape = cls.from_aspect_ratio(args.aspect_ratio, 2 * radius, args.density)
        else:
            shape = sim.make_shape(args.shape, length=length, radius=radius, density=args.density, **further)
        if args.mass is not None:
            shape = shape.with_mass(MASS.check("--mass", args.mass))
        return shape

    def drop(shape):
        # the options' own names in the message (the kernel's checks say "restitution")
        RESTITUTION.check("--restitution", args.restitution)
        FRICTION.check("--friction", args.friction)
        floor_angle = QUANTITIES["floor_angle"].allowed.check("--floor-angle", args.floor_angle)
        release = sim.Release(height=args.height, angle=radians_within_one_turn(args.angle), spin=args.spin,
                              vx=args.vx, vy=args.vy, reference=args.height_of, floor_angle=math.radians(floor_angle))
        if args.restitution_table is not None and args.speed_exponent:
            raise ValueError("give --restitution-table or --speed-exponent, not both")
        contact = sim.Contact(args.restitution, args.friction, args.law, speed_exponent=args.speed_exponent,
                              reference_speed=args.reference_speed, restitution_table=args.restitution_table,
                              contact_modulus=None if math.isnan(modulus) else modulus)
        return sim.simulate(shape, release, contact, impacts=args.impacts, model=args.model)

    shape = _user_value_errors(body)
    # the unit warnings come first: they often explain an error that follows
    # (a radius in millimetres puts the body inside the floor)
    from .plausibility import drop_warnings
    given = {"height": args.height, "spin": args.spin, "vx": args.vx, "vy": args.vy, "density": args.density,
             "friction": args.friction, "length": args.length, "radius": args.radius,
             "body_modulus": args.body_modulus, "floor_modulus": args.floor_modulus,
             "speed_exponent": args.speed_exponent, "reference_speed": args.reference_speed,
             **{name: getattr(args, name) for name in further_dimensions()}}
    report_warnings((f"--{name.replace('_', '-')}: {message}" for name, _, message in
                     drop_warnings(shape, {k: v for k, v in given.items() if v is not None})), args.strict)
    # materials are checked before anything is simulated
    from .contact_inputs import single_settings
    from .batch_contract import CONTACT_COLUMNS
    try:
        modulus = single_settings({name: getattr(args, name) for name in CONTACT_COLUMNS})[0]
    except ValueError as exc:  # worded with the option names of this command
        message = str(exc)
        for name in CONTACT_COLUMNS:
            message = message.replace(name, "--" + name.replace("_", "-"))
        raise InputError(message) from None
    result = _user_value_errors(lambda: drop(shape))
    bounces = sim.group_bounces(result, merge_window)
    print(drop_report(shape, result, bounces, args.reference, model=args.model))
    loads, e_star, edge = _contact_loads(args, shape, result)
    from .contact_report import NO_MATERIALS, contact_text
    if np.isnan(e_star):
        print("\n" + NO_MATERIALS)
    else:
        from hopscape.sim.materials import material
        sides = []
        for which in ("body", "floor"):
            name, poisson = getattr(args, f"{which}_material"), getattr(args, f"{which}_poisson")
            found = _user_value_errors(lambda: material(name)) if name is not None else None
            sides.append((which, found.strength if found else None, found.strength_kind if found else "",
                          poisson if poisson is not None else (found.poisson if found else None)))
        sharp = bool(np.all(shape.round_long == 0) and np.all(shape.round_wide == 0))
        print("\n" + contact_text(result, loads, sharp_rim=sharp, sides=sides))
    if args.csv is not None:
        from .batch import write_table
        write_table(impact_table(result, merge_window, loads=loads), args.csv)
        print(f"\nimpact table written to {args.csv}")
    if not args.no_plots:
        from . import plots
        args.out.mkdir(parents=True, exist_ok=True)
        paths = [args.out / "strobe.png", args.out / "energy.png", args.out / "bounces.png"]
        plots.strobe(result, path=paths[0])
        plots.energy(result, path=paths[1])
        plots.bounce_heights(result, bounces, reference=args.reference, path=paths[2])
        if not np.isnan(e_star):
            from hopscape.sim.contact_load import force_histories
            from .contact_report import force_picture
            curves = force_histories(result, 0, e_star, edge)
            shortest = float(np.nanmin(loads["contact_time"][0])) if np.any(np.isfinite(loads["contact_time"][0])) \
                else np.nan
            frames = (f"\nshortest contact {shortest * 1e6:.0f} us: about {float(f'{5 / shortest:.2g}'):,.0f} "
                      "frames/s catch 5 frames in it (a rule of thumb)") if np.isfinite(shortest) else ""
            paths.append(force_picture(curves, args.out / "forces.png",
                                       f"Contact force of each impact: {args.body_material or 'body'} on "
                                       f"{args.floor_material or 'floor'}" + frames))
        print("pictures: " + ", ".join(str(p) for p in paths))
    print("\nSafety: " + SAFETY)
    return EXIT_OK


def cmd_batch(args):
    """``hopscape batch``: many drops from a table, one output row per drop and impact."""
    from .batch import read_table, run_batch, write_table

    merge_window = merge_window_of(args)
    refuse_overwriting_input(args.out, args.drops)
    frame = read_table(args.drops)
    if frame.empty:
        raise InputError(f"{args.drops} holds no drops (only a header?); nothing to simulate")
    from .batch_contract import INPUT_COLUMNS
    unknown = [c for c in frame.columns if c not in INPUT_COLUMNS]
    if unknown:
        print(f"hopscape: note: ignoring column(s) {', '.join(map(str, unknown))} (known: {', '.join(INPUT_COLUMNS)})",
              file=sys.stderr)
    start = time.perf_counter()
    table = run_batch(frame, impacts=args.impacts, law=args.law, merge_within=merge_window,
                      warn=lambda lines: report_warnings(lines, args.strict), restitution_table=args.restitution_table,
                      model=args.model)
    elapsed = time.perf_counter() - start
    write_table(table, args.out)
    failed = int((table["error"] != "").sum())
    print(f"{len(frame)} drops, {int(table['impact'].notna().sum())} impacts in {elapsed:.2f} s; "
          f"{failed} row(s) could not be simulated (see the error column); written to {args.out}")
    if len(frame) and failed == len(frame):
        first = table.loc[table["error"] != "", "error"].iloc[0]
        raise InputError(f"no row of {args.drops} could be simulated (row 0: {first}); every row's reason is in "
                         f"the error column of {args.out}")
    return EXIT_OK


def cmd_bench(args):
    """``hopscape bench``: drops per second on the benchmark population."""
    from .bench import run_bench

    result = run_bench(args.drops, args.jobs, args.repeat)
    if args.json:
        print(json.dumps(result))
    else:
        print(f"{result['drops']} benchmark drops x {result['impacts']} impacts, {args.jobs} job(s): "
              f"{result['drops_per_second']:,.0f} drops/s (best of {args.repeat}: {result['seconds']:.3f} s)")
    return EXIT_OK


def run():
    """The ``hopscape`` console command: :func:`main` on ``sys.argv``, then exit.

    After an interrupt the run's workers are already stopped and its parts
    are on disk, so the process leaves at once with 130. (A normal exit
    could still end by SIGINT: CPython remembers a KeyboardInterrupt that
    passed through code it ran from C, e.g. while numpy loads, even when
    :func:`main` caught it, and re-kills itself at exit; seen in a third of
    the tries under load.)"""
    code = main()
    if code == EXIT_INTERRUPTED:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)
    sys.exit(code)


if __name__ == "__main__":
    run()
