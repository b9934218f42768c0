"""``hopscape plan``: what the rig must achieve at a study's picks, or at a
drop condition given on the command line (camera, release precision,
repeats, forces; docs/physics.md section 12)."""
from __future__ import annotations

import math
from pathlib import Path

from ..cli_text import STRICT_HELP, report_warnings
from ..errors import InputError
from ..quantities import QUANTITIES


def register(sub, handlers):
    """Add the ``plan`` command to the sub-parsers and its handler to ``handlers``."""
    from hopscape.sim.limits import Interval
    from hopscape.sim.materials import materials

    from ..options import number, positive_int
    from .camera import SENSOR_PIXELS

    p = sub.add_parser("plan", help="the rig plan at a pick: camera, release precision, repeats, forces",
                       description="What the rig must achieve at one of the study's picks (from its run's "
                       "picks.csv) or at a drop condition given with --at: the camera's frame rate, exposure and "
                       "field of view, the release tolerances that keep the goal's probability at the target, the "
                       "drops needed, and the largest contact forces. Writes plan.csv and rig-plan.png, and the "
                       "rig plan section of the run's report.html.")
    p.add_argument("study", help="study file, or a name found as studies/NAME.yaml")
    p.add_argument("--pick", default="1", metavar="RANK[,RANK...]|all",
                   help="rank(s) of the picks in the run's picks.csv, or all (default 1, the best); each is "
                        "compared with the next rank, its runner-up")
    p.add_argument("--at", default=None, metavar="NAME=VALUE,...",
                   help="a drop condition instead of a pick, in the study file's units, e.g. "
                        "--at angle=30,aspect_ratio=4 (every swept quantity needs a value)")
    p.add_argument("--run", type=Path, default=None, help="run folder holding picks.csv (default runs/<name>)")
    p.add_argument("--fov-width", type=number(float, Interval(0.0, 100.0, closed="right")), default=None,
                   help="[m] width of the camera's field of view (default: the drop's extent x 1.2)")
    p.add_argument("--sensor-pixels", type=positive_int("--sensor-pixels", 16, 100_000), default=SENSOR_PIXELS,
                   help=f"[px] pixels across the sensor's width (default {SENSOR_PIXELS})")
    p.add_argument("--target", type=number(float, Interval(0.0, 1.0, closed="neither")), default=None,
                   help="[-] goal probability the release must keep (default: the study's picks target)")
    p.add_argument("--drops", type=positive_int("--drops", 100, 200_000), default=2000,
                   help="simulated drops per Monte Carlo evaluation (default 2000)")
    names = ", ".join(materials())
    p.add_argument("--body-material", default=None, help=f"body material, for contact durations and forces "
                   f"(default: the study's): {names}")
    p.add_argument("--floor-material", default=None, help="floor material (default: the study's)")
    p.add_argument("--out", type=Path, default=None, help="folder for plan.csv and rig-plan.png (default: the run "
                   "folder, whose report.html then shows the plan)")
    p.add_argument("--strict", action="store_true", help=STRICT_HELP)
    handlers.update(plan=cmd_plan)


def _with_materials(study, args):
    """The study with the materials given on the command line."""
    from hopscape.sim.materials import materials
    known = materials()
    body, contact = study.body, study.contact
    for option, name in (("--body-material", args.body_material), ("--floor-material", args.floor_material)):
        if name is not None and name.strip().lower() not in known:
            raise InputError(f"{option} must be one of {', '.join(known)}, got {name!r}")
    if args.body_material is not None:
        body = body.model_copy(update={"material": args.body_material.strip().lower(), "modulus": None,
                                       "poisson": None})
    if args.floor_material is not None:
        contact = contact.model_copy(update={"floor_material": args.floor_material.strip().lower(),
                                             "floor_modulus": None, "floor_poisson": None})
    from ..contact_inputs import single_settings
    from ..study import contact_settings
    try:
        single_settings(contact_settings(body, contact))
    except ValueError as exc:
        raise InputError(f"{exc} (--body-material and --floor-material go together)") from None
    return study.model_copy(update={"body": body, "contact": contact})


def _conditions(study, args):
    """[(label, values, runner-up values or None)] of the plan."""
    from .conditions import condition_words, parse_at, read_picks
    if args.at is not None:
        values = parse_at(args.at, study)
        outside = [f"--at {name}={values[name]:g} is outside the study's swept {grid.low:g}-{grid.high:g} "
                   f"{QUANTITIES[name].unit}: the plan is for a condition the study did not map"
                   for name in study.gridded() for grid in [study.quantity(name).grid]
                   if not grid.low <= values[name] <= grid.high]
        report_warnings(outside, args.strict)
        return [(f"given: {condition_words(values)}", values, None)]
    picks = read_picks(args.run or Path("runs") / study.name, study)
    by_rank = {p["rank"]: p for p in picks}
    wanted = list(by_rank) if args.pick.strip().lower() == "all" else []
    for text in ([] if wanted else args.pick.split(",")):
        try:
            wanted.append(int(text))
        except ValueError:
            wanted.append(text.strip())
        if wanted[-1] not in by_rank:
            raise InputError(f"--pick must be ranks of the run's picks ({min(by_rank)}-{max(by_rank)}) or all, "
                             f"got {text.strip()!r}")
    return [(f"pick {rank}: {condition_words(by_rank[rank]['values'])}", by_rank[rank]["values"],
             by_rank[rank + 1]["values"] if rank + 1 in by_rank else None) for rank in dict.fromkeys(wanted)]


def cmd_plan(args):
    """``hopscape plan``: print the plan, write plan.csv, rig-plan.png and the report's section."""
    from ..commands import find_study
    from .conditions import at_condition
    from .output import PLAN_FILE, PLAN_PICTURE, plan_picture, plan_text, update_report, write_plan_csv
    from .plan import RigOptions, rig_plan
    from ..study import load_study

    path = find_study(args.study)
    study = load_study(path)
    report_warnings(study.warnings, args.strict)
    if args.out is not None and args.out.exists() and not args.out.is_dir():
        raise InputError(f"--out {args.out} is a file; the plan goes into a folder (nothing was written)")
    if args.fov_width is not None and args.fov_width > 2.0:   # legal, but a lab drop rarely needs it
        report_warnings([f"--fov-width {args.fov_width:g} m is wider than a drop rig's camera usually sees; "
                         "the option is in metres (millimetres typed?)"], args.strict)
    study = _with_materials(study, args)
    options = RigOptions(fov_width=args.fov_width, sensor_pixels=args.sensor_pixels, target=args.target,
                         drops=args.drops)
    plans = []
    for label, values, runner in _conditions(study, args):
        plans.append(rig_plan(at_condition(study, values), label, options,
                              runner_up=None if runner is None else at_condition(study, runner)))
    out = args.out or args.run or Path("runs") / study.name
    out.mkdir(parents=True, exist_ok=True)
    print(plan_text(plans))
    csv = write_plan_csv(plans, out / PLAN_FILE)
    picture = plan_picture(plans, out / PLAN_PICTURE, study.name)
    page = update_report(out)
    print(f"\nwritten: {csv}, {picture}" + (f"; section added to {page}" if page else ""))
    if any(not math.isfinite(r["value"]) for p in plans for r in p.rows if r["item"] == "shortest contact"):
        print("hopscape: note: no materials: the contact frame rate and forces need --body-material and "
              "--floor-material (or the study's body.material and contact.floor_material)")
    return 0
