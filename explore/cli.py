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
from .errors import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_INTERRUPTED, EXIT_OK, InputError, shown
from .files import refuse_overwriting_input
from .safety import SAFETY



class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit code 2."""

    def error(self, message):
        raise InputError(message if self.prog == "hopscape" else f"{self.prog.split()[-1]}: {message}")


def _number(kind, allowed=None):
    """An option's converter: a number (``kind`` float or int) in ``allowed``
    (a :class:`hopscape.sim.limits.Interval`; any finite number if None)."""
    from hopscape.sim.limits import FINITE, number_text
    allowed = FINITE if allowed is None else allowed
    words = "a whole number" if kind is int else "a number"

    def convert(text):
        try:
            value = kind(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"must be {words}, got {shown(text)}")
        if not allowed.contains(value):
            raise argparse.ArgumentTypeError(f"must be {allowed.describe()}, got {number_text(value)}")
        return value
    return convert


def _finite(name):
    """An option's converter: any finite number."""
    return _number(float)


def _positive_int(name, low=1, high=None):
    """An option's converter: a whole number in [low, high]."""
    from hopscape.sim.limits import Interval
    return _number(int, Interval(low, float("inf") if high is None else high))


def _declared_int(name, field):
    """A whole-number option bounded like the study file's ``RunSettings`` field."""
    from .study import RunSettings, declared_range
    allowed = declared_range((RunSettings, field))
    return _positive_int(name, int(allowed.low), int(allowed.high))


#: Most drops ``hopscape bench`` times at once (its result is held in memory:
#: 10^6 drops peak near 500 MB).
BENCH_DROPS = 2_000_000


def _merge_window_options(parser):
    """``--merge-ms`` or ``--fps``: which impacts make one visible bounce."""
    window = parser.add_mutually_exclusive_group()
    window.add_argument("--merge-ms", type=_finite("--merge-ms"), default=None,
                        help="[ms] impacts closer than this make one visible bounce (default 10: what a camera at "
                             "100 frames per second merges)")
    window.add_argument("--fps", type=_finite("--fps"), default=None,
                        help="[1/s] your camera's frame rate, instead of --merge-ms: impacts closer than one frame "
                             "interval make one visible bounce")


def _merge_window(args):
    """The bounce-grouping window of ``--merge-ms`` or ``--fps`` [s], bounded like the study file's."""
    from .study import bounce_window

    return bounce_window(args.merge_ms, args.fps, names=("--merge-ms", "--fps"))


def _law_help():
    """One clause per impact law, from :data:`sim.impact.LAW_TABLE`."""
    from hopscape.sim.impact import LAW_TABLE
    return "; ".join(f"{law.name}: {law.description}" for law in LAW_TABLE)


def _model_help():
    return ("contact model: impulse (Routh's method, one point per impact; the default), two-ends (the same, "
            "but landings near flat, where both ends touch within one contact duration, resolved together by "
            "the compliant two-contact impact: continuous through flat, about half as fast) or compliant (every "
            "impact integrated through the contact: Hertz force, calibrated damping, regularised friction); "
            "two-ends and compliant take E* from the materials, default hard gelatin on steel")


def _further_dimensions():
    """Dimensions some shape declares besides length and radius (their own options)."""
    from hopscape import sim
    return [name for name in dict.fromkeys(d.name for cls in sim.SHAPES.values() for d in cls.dimensions)
            if name not in ("length", "radius")]


def _contact_options(parser):
    """The contact model's options of ``drop`` (the batch table's columns of the same names)."""
    from hopscape.sim.limits import REFERENCE_SPEED, SPEED_EXPONENT
    from .batch_contract import CONTACT_COLUMNS, INPUT_COLUMNS
    for name, allowed in (("speed_exponent", SPEED_EXPONENT), ("reference_speed", REFERENCE_SPEED)):
        words, default = INPUT_COLUMNS[name]
        parser.add_argument(f"--{name.replace('_', '-')}", type=_number(float, allowed), default=default,
                            help=f"[{words.partition(', ')[0]}] {words.partition(', ')[2]} (default {default:g})")
    for name, words in CONTACT_COLUMNS.items():
        unit, _, rest = words.partition(", ") if not name.endswith("_material") else ("", "", words)
        parser.add_argument(f"--{name.replace('_', '-')}", default=None,
                            type=None if name.endswith("_material") else _finite(name),
                            help=(f"[{unit}] {rest}" if unit else rest).replace("%", "%%"))


def _restitution_table(text):
    """An option's converter: ``speed:restitution,speed:restitution,...``
    (at least two pairs, speeds rising) as a tuple of pairs."""
    from hopscape.sim.impact import check_restitution_table
    try:
        pairs = tuple(tuple(float(x) for x in pair.split(":")) for pair in text.split(","))
        return tuple(map(tuple, check_restitution_table(pairs).tolist()))
    except ValueError as exc:
        reason = str(exc) if "restitution_table" in str(exc) else "pairs must read speed:restitution"
        raise argparse.ArgumentTypeError(f"{reason.replace('restitution_table ', '')} (e.g. 0.5:0.9,1:0.8,3:0.6; "
                                         f"got {shown(text)})")


def _table_option(parser, rows=""):
    parser.add_argument("--restitution-table", type=_restitution_table, default=None,
                        help="measured restitution against normal impact speed, speed:restitution pairs [m/s:-] "
                             "with speeds rising, e.g. 0.5:0.9,1:0.8,3:0.6; linear between them, the end values "
                             "beyond; replaces the restitution" + rows + " and its speed law")


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
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    # --- drop --------------------------------------------------------
    d = sub.add_parser("drop", help="simulate one drop, print its impacts and bounces, draw pictures")
    d.add_argument("--shape", default="capsule", choices=list(sim.SHAPES))
    d.add_argument("--length", type=_finite("--length"), default=None,
                   help=f"[m] {per_shape('length')} (default 0.014)")
    d.add_argument("--radius", type=_finite("--radius"), default=None,
                   help=f"[m] {per_shape('radius')} (default 0.0035)")
    for name in _further_dimensions():
        d.add_argument(f"--{name.replace('_', '-')}", type=_finite(f"--{name}"), default=None,
                       help=f"[m] {per_shape(name)} (default: the shape's own)")
    d.add_argument("--aspect-ratio", type=_finite("--aspect-ratio"), default=None,
                   help="overall length / diameter, instead of --length (uses --radius)")
    d.add_argument("--density", type=_finite("--density"), default=1200.0, help="[kg/m^3] (default 1200)")
    d.add_argument("--mass", type=_finite("--mass"), default=None, help="[kg] total mass, instead of --density")
    d.add_argument("--restitution", type=_finite("--restitution"), default=0.8, help=f"[-] {RESTITUTION.describe()} (default 0.8)")
    d.add_argument("--friction", type=_finite("--friction"), default=0.3, help=f"[-] Coulomb, {FRICTION.describe()} (default 0.3)")
    d.add_argument("--law", default="energetic", choices=sim.LAWS, help=_law_help())
    d.add_argument("--model", default=sim.MODELS[0], choices=sim.MODELS, help=_model_help())
    _contact_options(d)
    _table_option(d)
    d.add_argument("--height", type=_finite("--height"), default=0.3, help="[m] release height (default 0.3)")
    d.add_argument("--height-of", default="centre", choices=["centre", "bottom"],
                   help="which point --height is measured to (default centre)")
    d.add_argument("--angle", type=_finite("--angle"), default=30.0,
                   help="[deg] from horizontal to the axis, counter-clockwise (default 30)")
    d.add_argument("--spin", type=_finite("--spin"), default=0.0, help="[rad/s] counter-clockwise (default 0)")
    d.add_argument("--vx", type=_finite("--vx"), default=0.0, help="[m/s] (default 0)")
    d.add_argument("--vy", type=_finite("--vy"), default=0.0, help="[m/s] (default 0)")
    d.add_argument("--floor-angle", type=_finite("--floor-angle"), default=0.0,
                   help="[deg] floor inclination, positive where the floor falls towards +x, "
                   f"{QUANTITIES['floor_angle'].allowed.describe()} (default 0: level); height, angle, vx and "
                   "vy are then in floor coordinates, heights normal to the floor")
    d.add_argument("--impacts", type=_declared_int("--impacts", "impacts"), default=IMPACTS,
                   help=f"impacts to follow (default {IMPACTS}, as in batch and studies)")
    _merge_window_options(d)
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
    b.add_argument("--impacts", type=_declared_int("--impacts", "impacts"), default=IMPACTS,
                   help=f"impacts per drop (default {IMPACTS}, as in drop and studies)")
    b.add_argument("--law", default="energetic", choices=sim.LAWS,
                   help="law for rows without a law column value (default energetic): " + _law_help())
    b.add_argument("--model", default=sim.MODELS[0], choices=sim.MODELS,
                   help=_model_help() + "; one material pair per batch")
    _merge_window_options(b)
    _table_option(b, " column of every row")
    b.add_argument("--strict", action="store_true", help=STRICT_HELP)

    # --- bench -------------------------------------------------------
    n = sub.add_parser("bench", help="time the kernel on the benchmark population")
    n.add_argument("--drops", type=_positive_int("--drops", 1, BENCH_DROPS), default=200_000, help="drops to time (default 200000)")
    n.add_argument("--jobs", type=_declared_int("--jobs", "jobs"), default=1, help="worker processes (default 1)")
    n.add_argument("--repeat", type=_positive_int("--repeat"), default=3, help="timed runs; the best is reported")
    n.add_argument("--json", action="store_true", help="print one JSON object")

    from . import commands  # noqa: F401  (study commands register themselves)
    commands.register(sub)
    # the calibration commands: film -> track -> fit
    from .video.command import register as register_track
    from .calibration.command import register as register_fit
    register_track(sub, commands.HANDLERS)
    register_fit(sub, commands.HANDLERS)
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
    from hopscape.sim.limits import MASS
    from .batch import impact_table
    from .quantities import QUANTITIES
    from .report_text import drop_report

    merge_window = _merge_window(args)
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
        further = {name: getattr(args, name) for name in _further_dimensions()}
        cls = sim.SHAPES[args.shape]
        if args.aspect_ratio is not None:
            shape = cls.from_aspect_ratio(args.aspect_ratio, 2 * radius, args.density)
        else:
            shape = sim.make_shape(args.shape, length=length, radius=radius, density=args.density, **further)
        if args.mass is not None:
            shape = shape.with_mass(MASS.check("--mass", args.mass))
        return shape

    def drop(shape):
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
             **{name: getattr(args, name) for name in _further_dimensions()}}
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
    print(drop_report(shape, result, bounces, args.reference))
    loads, e_star, edge = _contact_loads(args, shape, result)
    from .contact_report import NO_MATERIALS, contact_text
    if np.isnan(e_star):
        print("\n" + NO_MATERIALS)
    else:
        from hopscape.sim.materials import material
        strength, poisson = None, args.body_poisson
        if args.body_material is not None:
            found = _user_value_errors(lambda: material(args.body_material))
            strength = (found.strength, found.strength_kind)
            poisson = found.poisson if poisson is None else poisson
        sharp = bool(np.all(shape.round_long == 0) and np.all(shape.round_wide == 0))
        print("\n" + contact_text(result, loads, sharp_rim=sharp, strength=strength, poisson=poisson))
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

    merge_window = _merge_window(args)
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
