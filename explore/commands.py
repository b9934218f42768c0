"""Study commands: ``run``, ``check`` and ``new``."""
from __future__ import annotations

import json
import os
import re
import sys
import time
from pathlib import Path

from .cli_text import STRICT_HELP, report_warnings
from .defaults import execution
from .errors import InputError, shown
from .files import folder_lock, write_text

HANDLERS = {}

#: Drops per second per job for time estimates, measured end to end on the
#: example studies here (kernel, metrics, Parquet, analysis and plots).
ESTIMATE_RATE = 35_000



def register(sub):
    """Add the ``run``, ``check``, ``new`` and ``plan`` commands and their handlers.

    Parameters
    ----------
    sub : argparse._SubParsersAction
        The command line's sub-command parsers.
    """
    run = sub.add_parser("run", help="run a study: maps, ranking, picks and report.html")
    run.add_argument("study", help="study file, or a name found as studies/NAME.yaml")
    run.add_argument("--out", type=Path, default=None, help="run folder (default runs/<name>)")
    run.add_argument("--fresh", action="store_true", help="discard earlier results in the run folder")
    from .options import declared_int
    run.add_argument("--jobs", type=declared_int("--jobs", "jobs"), default=None, help="override run.jobs")
    run.add_argument("--backend", choices=["loky", "threading", "sequential", "dask"], default=None,
                     help="override run.backend: worker processes (loky), threads, this process only, or Dask")
    run.add_argument("--scheduler", default=None, help="address of a Dask scheduler (implies --backend dask)")
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    run.add_argument("--strict", action="store_true", help=STRICT_HELP)
    check = sub.add_parser("check", help="validate a study file and say what it will run")
    check.add_argument("study", help="study file, or a name found as studies/NAME.yaml")
    check.add_argument("--strict", action="store_true", help=STRICT_HELP)
    new = sub.add_parser("new", help="write a commented study template")
    new.add_argument("name", help="study name; writes studies/NAME.yaml unless --out is given")
    new.add_argument("--out", type=Path, default=None, help="where to write the template (default studies/NAME.yaml)")
    HANDLERS.update(run=cmd_run, check=cmd_check, new=cmd_new)


def find_study(text):
    """The study file a command names.

    Parameters
    ----------
    text : str
        A path, or a name looked up as ``studies/NAME.yaml`` (or ``.yml``).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        When neither exists (the message says where it looked).
    """
    path = Path(text)
    if path.is_file():
        return path
    for candidate in (Path("studies") / f"{text}.yaml", Path("studies") / f"{text}.yml"):
        if candidate.is_file():
            return candidate
    looked = f"{text}" if text.endswith((".yaml", ".yml")) else f"{text} and studies/{text}.yaml"
    raise InputError(f"{text}: no such study file (looked for {looked})")


def machine_room(folder):
    """(memory of this machine, disk free where ``folder`` would be) [bytes]."""
    import shutil
    memory = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    where = Path(folder).resolve()
    while not where.exists():
        where = where.parent
    return memory, shutil.disk_usage(where).free


def resource_problems(study, counts, folder):
    """What this machine cannot hold of the run (memory over 80 %, disk over
    what is free), with the numbers and how to shrink the study; and the
    sentence that states the need."""
    from .plan import resource_estimate
    need = resource_estimate(study, counts)
    memory, free = machine_room(folder)
    said = (f"needs about {need['memory'] / 1e9:.2g} GB of memory (this machine: {memory / 1e9:.3g} GB) and "
            f"{need['disk'] / 1e6:,.0f} MB of disk ({free / 1e9:.3g} GB free there)")
    biggest = max(counts, key=counts.get)
    shrink = (f"use fewer grid steps, draws or samples (the {biggest} stage is the largest, "
              f"{counts[biggest]:,} drops)")
    problems = []
    if need["memory"] > 0.8 * memory:
        problems.append(f"the run {said}: more than this machine's memory allows; {shrink}")
    elif need["disk"] > free:
        problems.append(f"the run {said}: more disk than is free; {shrink}, or choose another --out")
    return problems, said


def cmd_check(args):
    """``hopscape check``: validate a study file and say what it will run.

    Parameters
    ----------
    args : argparse.Namespace
        ``study``: the study file or name.

    Returns
    -------
    int
        The exit code, 0.
    """
    from .plan import count_drops
    from .study import load_study

    path = find_study(args.study)
    study = load_study(path)
    report_warnings(study.warnings, args.strict)
    counts = count_drops(study)
    total = sum(counts.values())
    in_process, _ = execution(total, study.run.jobs, study.run.backend)
    estimate = total / (ESTIMATE_RATE * (1 if in_process else study.run.jobs)) + 5.0
    problems, said = resource_problems(study, counts, Path("runs") / study.name)
    if problems:
        raise InputError([f"{path}: {line}" for line in problems])
    print(f"{path}: ok - study '{study.name}'")
    print(f"  gridded: {', '.join(study.gridded()) or 'none'}; distributed: {', '.join(study.random()) or 'none'}")
    for stage, n in counts.items():
        print(f"  {stage:>7}: {n:>10,} drops")
    _, where = execution(total, study.run.jobs, study.run.backend)
    print(f"  total: {total:,} drops x up to {study.run.impacts} impacts; estimated {estimate:.0f} s; runs {where}")
    if study.run.backend == "dask" or study.run.scheduler:
        size = study.run.chunk_size
        tasks = sum(-(-n // size) for n in counts.values())
        # a worker kept busy wants a few tasks, so that one slow task does not leave the others idle
        print(f"  {tasks:,} tasks of up to {size:,} drops: enough for about {max(1, tasks // 4):,} Dask worker(s) "
              f"(lower run.chunk_size for a bigger cluster; each task costs ~25 ms beyond its drops)")
    print(f"  {said}")
    return 0


def cmd_run(args):
    """``hopscape run``: simulate a study, analyse it and write its report.

    Prints one sentence first when the event never or always happened, then
    the drop counts, the time of each step, the quantities that matter most
    (by the ranking column of the sensitivity method that ran), the best
    pick and the safe regions, and records counts and times in :data:`RUN_RECORD`.

    Parameters
    ----------
    args : argparse.Namespace
        The ``run`` options (study, out, fresh, jobs, backend, scheduler,
        quiet).

    Returns
    -------
    int
        The exit code, 0.
    """
    from .study import load_study

    path = find_study(args.study)
    study = load_study(path)
    report_warnings(study.warnings, args.strict)
    if args.out is not None and args.out.exists() and not args.out.is_dir():
        raise InputError(f"--out {args.out} is a file; the run folder must be a folder (nothing was written)")
    out = args.out or Path("runs") / study.name
    from .plan import count_drops
    problems, _ = resource_problems(study, count_drops(study), out)
    if problems:
        raise InputError([f"{path}: {line}" for line in problems])
    with folder_lock(out):   # held through the analysis and the report too
        return _run_and_report(args, study, path, out)


def _run_and_report(args, study, path, out):
    """The body of :func:`cmd_run`, with the run folder held."""
    from .analysis import analyse
    from .answer import answer_lines
    from .report import write_report
    from .runner import RUN_RECORD, run_study

    start = time.perf_counter()
    outcome = run_study(study, out, path.read_text(encoding="utf-8"), fresh=args.fresh, jobs=args.jobs,
                        backend=args.backend, scheduler=args.scheduler, progress=not args.quiet)
    for note in outcome.notes:
        print(f"hopscape: note: {note}", file=sys.stderr)
    art = analyse(outcome)
    seconds = {"sampling": outcome.seconds["sampling"], "simulation": outcome.seconds["simulation"],
               "loading": outcome.seconds["loading"], "analysis": art.seconds.get("analysis", 0.0),
               "plotting": art.seconds.get("plotting", 0.0)}
    t = time.perf_counter()
    report = write_report(outcome, art, seconds)
    seconds["report"] = time.perf_counter() - t
    seconds["total"] = time.perf_counter() - start
    write_text(outcome.folder / RUN_RECORD, json.dumps({"drops": outcome.total, "simulated": outcome.simulated,
                                                          "sensitivity_method": art.method, "seconds": seconds},
                                                         indent=1))
    if art.headline:
        print(art.headline)
    print(f"{study.name}: {outcome.total:,} drops ({outcome.simulated:,} simulated now) in {seconds['total']:.1f} s")
    print("  time: " + ", ".join(f"{k} {v:.2f} s" for k, v in seconds.items() if k != "total"))
    for label, text in answer_lines(study, art):
        print(f"  {label}: {text}")
    print(f"  report: {report}")
    return 0


def cmd_new(args):
    """``hopscape new``: write a commented study template.

    Parameters
    ----------
    args : argparse.Namespace
        ``name`` (the study's name) and ``out`` (the file, default
        ``studies/NAME.yaml``; never overwritten).

    Returns
    -------
    int
        The exit code, 0.
    """
    from .study import Study
    field = Study.model_fields["name"]   # the rule the study file will be checked by
    pattern = next(m.pattern for m in field.metadata if getattr(m, "pattern", None))
    longest = next(m.max_length for m in field.metadata if getattr(m, "max_length", None))
    if not re.fullmatch(pattern, args.name) or len(args.name) > longest:
        raise InputError(f"name must be letters, digits, '.', '_' or '-', starting with a letter or digit, at most "
                         f"{longest} characters; got {shown(args.name)}")
    out = args.out or Path("studies") / f"{args.name}.yaml"
    if out.exists():
        raise InputError(f"{out} exists; choose another name or --out (nothing was overwritten)")
    from .study import template_text
    out.parent.mkdir(parents=True, exist_ok=True)
    write_text(out, template_text(args.name))
    print(f"wrote {out}; edit it, then: hopscape check {out} && hopscape run {out}")
    return 0
