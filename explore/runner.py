"""Run a study: chunks in parallel, each finished chunk saved at once.

Samples -> chunk-sized tasks -> joblib (``return_as="generator_unordered"``)
-> each finished chunk written atomically as its own Parquet part (temporary
file, fsync, ``os.replace``) -> a progress bar with drops per second.

Running the same study into the same folder again skips the finished
chunks, so a run killed at any moment completes on the next call with the
same table an uninterrupted run gives. A folder holding another study's
parts is refused (``fresh=True`` starts over).

Every part carries a ``stage`` column (:data:`STAGE_COLUMN`), so that
parts read together (``pandas.read_parquet`` on the ``results`` folder,
which keeps the first part's columns) keep the stages apart.

Parts prove what they are: each records in its Parquet metadata the
study's fingerprint, its stage, its task number, its first row and row
count, and a checksum of its content (:func:`part_proof`). Before a run
resumes, every existing part is read and checked against what its task
must hold; a part that is unreadable, short, from another task or study,
altered, or without a proof (written by an earlier version) is moved to
``results/rejected/`` with the reason in its name, reported, and computed
again, so the final table is the one an uninterrupted run gives.
"""
from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import sys
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd
from joblib import Parallel, delayed, parallel_config
from tqdm.auto import tqdm

from hopscape.sim._memory import allocator_environment

from .defaults import execution
from .errors import InputError
from .metrics import simulate_frame
from .plan import build_stages
from .study import Study
from .stage_tables import StageTables
from .files import atomic_write, folder_lock, write_text


@dataclass
class RunOutcome:
    """What :func:`run_study` hands to the analyses.

    Attributes
    ----------
    study : Study
        The validated study that was run.
    folder : pathlib.Path
        The run folder (``study.yaml``, ``results/part-*.parquet``, ...).
    tables : explore.stage_tables.StageTables
        Per stage (``grid``, ``robust``, ``sobol``, ``morris``): the
        :data:`STAGE_COLUMN`, the input columns and the metric columns, in
        stage order; read from the parts when first asked for.
    plan : object or None
        The sensitivity plan the ``sobol`` or ``morris`` stage was drawn
        from, or None.
    seconds : dict of str to float
        Wall time of ``sampling``, ``simulation`` and ``loading``. [s]
    simulated : int
        Drops simulated in this call (the rest were already on disk).
    total : int
        Drops in all stages.
    notes : list of str
        One line per result part that was rejected and computed again.
    """
    study: Study
    folder: Path
    tables: Mapping         # stage -> DataFrame (inputs + metrics), in input order, read from the parts on demand
    plan: object            # the SALib plan, or None
    seconds: dict = field(default_factory=dict)
    simulated: int = 0      # drops simulated in this call (the rest were on disk)
    total: int = 0
    notes: list = field(default_factory=list)   # parts rejected and computed again, one line each


#: The record of a run's counts and times, beside its report (written by ``hopscape run``).
RUN_RECORD = "run.json"

#: Column naming the stage of every row of a result part (and of the tables
#: :func:`run_study` returns): ``grid``, ``robust``, ``sobol`` or ``morris``.
STAGE_COLUMN = "stage"


def _part_name(stage, k):
    return f"part-{stage}-{k:05d}.parquet"


def write_atomic(frame: pd.DataFrame, path: Path):
    """Write a Parquet file so that it is either whole or absent.

    The table goes to a temporary file beside ``path``, is flushed to disk,
    then renamed over ``path``; an interruption (Ctrl-C included) at any
    point leaves neither a part nor the temporary file.

    Parameters
    ----------
    frame : pandas.DataFrame
        The table, written without its index.
    path : pathlib.Path
        The final file name.
    """
    with atomic_write(path) as tmp:
        frame.to_parquet(tmp, index=False)


#: Key of a part's proof in its Parquet metadata.
PROOF_KEY = b"hopscape"


def part_checksum(frame: pd.DataFrame):
    """SHA-256 of a table's column names and content, row order included."""
    digest = hashlib.sha256(json.dumps([str(c) for c in frame.columns]).encode())
    digest.update(pd.util.hash_pandas_object(frame, index=False).to_numpy().tobytes())
    return digest.hexdigest()


def part_proof(study: Study, stage, task, first_row, frame):
    """What a result part records about itself (see the module notes)."""
    return {"fingerprint": study.fingerprint(), "stage": stage, "task": task, "first_row": first_row,
            "rows": len(frame), "checksum": part_checksum(frame)}


def write_part(frame: pd.DataFrame, path: Path, proof: dict):
    """Write a result part with its proof in the Parquet metadata, atomically."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame, preserve_index=False)
    metadata = {**(table.schema.metadata or {}), PROOF_KEY: json.dumps(proof).encode()}
    with atomic_write(path) as tmp:
        pq.write_table(table.replace_schema_metadata(metadata), tmp)


def read_part(path: Path, expected: dict):
    """A result part and why it cannot be used (None when it can).

    ``expected`` is :func:`part_proof`'s dict without the checksum: what the
    part's task must hold. Returns ``(frame, None)`` or ``(None, reason)``.
    """
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(path)
        frame = table.to_pandas()
    except Exception as exc:  # noqa: BLE001 - any unreadable file is rejected the same way
        return None, f"unreadable ({type(exc).__name__})"
    raw = (table.schema.metadata or {}).get(PROOF_KEY)
    if raw is None:
        return None, "no proof of origin (written by an earlier version or another program)"
    try:
        proof = json.loads(raw)
    except ValueError:
        return None, "an unreadable proof"
    for key, value in expected.items():
        if proof.get(key) != value:
            return None, f"from another task or study ({key} {proof.get(key)!r} instead of {value!r})"
    if len(frame) != expected["rows"]:
        return None, f"short ({len(frame)} of {expected['rows']} rows)"
    if proof.get("checksum") != part_checksum(frame):
        return None, "altered (its content does not match its checksum)"
    return frame, None


def _reject(path, reason):
    """Move a part that cannot be used to ``results/rejected/``; the line to report."""
    aside = path.parent / "rejected"
    aside.mkdir(exist_ok=True)
    target = aside / f"{path.name}.{time.strftime('%Y%m%d-%H%M%S')}"
    path.replace(target)
    return (f"{path.parent.name}/{path.name} was {reason}; moved to {aside.name}/{target.name} and computed "
            "again")


def _earlier_outputs():
    """Every file and folder a run writes in its folder, except the study file (rewritten each time)."""
    # imported here: chunk workers import this module and need neither the analysis nor plotting
    from .analysis import output_names
    from .report import REPORT_FILE

    return ("results", "fingerprint.json", *output_names(), REPORT_FILE, RUN_RECORD)


def prepare_folder(study: Study, folder: Path, source_text: str, fresh=False):
    """Create or reuse the run folder; refuse one that holds another study.

    Parameters
    ----------
    study : Study
        The validated study to run.
    folder : pathlib.Path
        The run folder; created when missing.
    source_text : str
        The study file's text, kept as ``study.yaml``; empty when called
        from Python, then the validated study is written instead.
    fresh : bool, optional
        Remove everything an earlier run wrote here first (result parts,
        figures, every analysis file of any sensitivity method, the report
        and the run record); other files in the folder are left alone.

    Returns
    -------
    pathlib.Path
        The folder, holding ``results/``, ``study.yaml`` and
        ``fingerprint.json``.

    Raises
    ------
    InputError
        When the folder holds results of another study (and ``fresh`` is
        off), or is not a run folder at all: it exists, holds files and no
        ``fingerprint.json`` (its files are left alone, ``fresh`` or not).
    """
    folder = Path(folder)
    stamp = folder / "fingerprint.json"
    if folder.is_dir() and not stamp.exists():
        # a run writes (and --fresh removes) maps/, picks.csv, report.html ...:
        # in a folder it did not make, those may be the user's own files
        from .files import LOCK_FILE
        theirs = sorted(p.name for p in folder.iterdir() if p.name != LOCK_FILE)
        only_parts = theirs == ["results"] and all(p.name.startswith(("part-", ".part-"))
                                                   for p in (folder / "results").iterdir())
        if theirs and not only_parts:   # result parts alone: of unknown origin, handled below
            shown_names = ", ".join(theirs[:3]) + (", ..." if len(theirs) > 3 else "")
            raise InputError(f"{folder} is not a hopscape run folder (it holds {shown_names}); give a new or empty "
                             "folder with --out (nothing was changed)")
    if fresh and folder.exists():
        for name in _earlier_outputs():
            path = folder / name
            if path.is_dir():
                shutil.rmtree(path, ignore_errors=True)
            else:
                with contextlib.suppress(FileNotFoundError):
                    path.unlink()
    if stamp.exists():
        try:
            old = json.loads(stamp.read_text())
        except (OSError, ValueError):
            raise InputError(f"{stamp} is unreadable, so the folder's results cannot be trusted; rerun with "
                             "--fresh to start over, or choose another --out") from None
        if old.get("fingerprint") != study.fingerprint():
            from .study import changed_fields
            changed = changed_fields(old.get("numbers", {}), study.numbers()) if "numbers" in old else []
            what = f"changed: {', '.join(changed[:6])}" if changed else "the study changed"
            raise InputError(f"{folder} holds results of another version of study '{old.get('name')}' ({what}); "
                             "rerun with --fresh to start over, or choose another --out")
    elif (folder / "results").exists() and any((folder / "results").glob("part-*.parquet")):
        raise InputError(f"{folder} holds result parts of unknown origin; rerun with --fresh or choose another --out")
    (folder / "results").mkdir(parents=True, exist_ok=True)
    for stale in (folder / "results").glob("*.tmp*"):
        stale.unlink()
    if not source_text.strip():  # called from Python: record the validated study itself
        from ruamel.yaml import YAML
        import io
        buffer = io.StringIO()
        YAML(typ="safe", pure=True).dump(study.model_dump(mode="json", exclude_none=True), buffer)
        source_text = "# written by hopscape from the validated study\n" + buffer.getvalue()
    write_text(folder / "study.yaml", source_text)
    write_text(stamp, json.dumps({"name": study.name, "fingerprint": study.fingerprint(),
                                 "numbers": study.numbers()}, indent=1))
    return folder


def _with_stage(table, stage):
    """``table`` with the :data:`STAGE_COLUMN` first."""
    table = table.copy()
    table.insert(0, STAGE_COLUMN, stage)
    return table


def _work(study, stage, k, frame, results, first_row):
    """One chunk where it runs (a worker, or the run's own process):
    simulate it and write its part with its proof. Only the row count goes
    back, so no table travels through a pipe or a Dask scheduler; the run
    folder must be one the workers can write (on a cluster, a shared disk)."""
    table = _with_stage(simulate_frame(study, frame), stage)
    write_part(table, Path(results) / _part_name(stage, k), part_proof(study, stage, k, first_row, table))
    return stage, k, len(table)


_watching_parent = False


def _end_with(parent):
    """Started in each worker process of the run's process ``parent`` (a
    pid; loky's initializer, so that a worker that never got a task is
    covered too): ask Linux to kill this worker when that process ends,
    however it ends (``kill -9`` included), so no worker and no resource
    tracker waiting on it outlives a dead run. Nothing in the run's own
    process, under another parent, or elsewhere than Linux."""
    global _watching_parent
    if _watching_parent or parent is None or os.getpid() == parent or not sys.platform.startswith("linux"):
        return
    _watching_parent = True
    if os.getppid() != parent:   # the run ended while this worker was starting
        os._exit(1)
    import ctypes
    import signal

    PR_SET_PDEATHSIG = 1
    ctypes.CDLL(None, use_errno=True).prctl(PR_SET_PDEATHSIG, signal.SIGKILL)
    if os.getppid() != parent:   # it ended before the request took hold
        os._exit(1)


@contextlib.contextmanager
def _backend(jobs, backend, scheduler):
    if backend == "dask":
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise InputError("run.backend: dask needs the dask extra: pip install 'hopscape[dask]'") from None
        if scheduler:
            client = Client(scheduler)
            cluster = None
        else:
            import dask

            # Dask's nanny starts every worker with a 64 kB malloc trim
            # threshold, which hands the kernel's freed arrays back to the
            # system after every step (about 3.4x slower per task, measured
            # with benchmarks/study_scale.py); the workers get the
            # allocator setting of hopscape.sim._memory in their environment
            environ = {**dask.config.get("distributed.nanny.pre-spawn-environ", {}), **allocator_environment()}
            with dask.config.set({"distributed.nanny.pre-spawn-environ": environ}):
                cluster = LocalCluster(n_workers=jobs, threads_per_worker=1, processes=True,
                                       dashboard_address=None)
            client = Client(cluster)
        try:
            with parallel_config(backend="dask"):
                yield None
        finally:
            client.close()
            if cluster is not None:
                cluster.close()
    else:
        yield None


def run_study(study: Study, folder, source_text="", *, fresh=False, jobs=None, backend=None,
              scheduler=None, progress=True) -> RunOutcome:
    """Simulate every stage of ``study`` into ``folder``, resuming.

    Stages are cut into ``run.chunk_size`` chunks; each finished chunk is
    written at once as its own Parquet part, and chunks whose part already
    exists are not simulated again, so the tables do not depend on jobs,
    backend, chunking or interruptions.

    Parameters
    ----------
    study : Study
        The validated study.
    folder : str or pathlib.Path
        The run folder; created if missing. A folder holding another
        study's parts raises :class:`~explore.errors.InputError`.
    source_text : str, optional
        The study file's text, kept as ``study.yaml``; empty writes the
        validated study instead.
    fresh : bool, optional
        Discard earlier results in ``folder`` first.
    jobs : int, optional
        Parallel workers; default ``run.jobs``.
    backend : {"loky", "threading", "sequential", "dask"}, optional
        joblib backend; default ``run.backend``.
    scheduler : str, optional
        Address of a Dask scheduler (implies ``backend="dask"``).
    progress : bool, optional
        Show a progress bar with drops per second.

    Returns
    -------
    RunOutcome
        The study, folder, per-stage tables, plan, timings [s] and counts.

    Raises
    ------
    InputError
        For a folder that holds another study's results, or a missing Dask
        installation.
    """
    with folder_lock(folder):
        return _run_locked(study, Path(folder), source_text, fresh, jobs, backend, scheduler, progress)


def _run_locked(study, folder, source_text, fresh, jobs, backend, scheduler, progress):
    """:func:`run_study` with the folder held (:func:`hopscape.files.folder_lock`)."""
    clock = {"start": time.perf_counter()}
    folder = prepare_folder(study, folder, source_text, fresh=fresh)
    asked = jobs is not None
    jobs = jobs or study.run.jobs
    backend = backend or study.run.backend
    scheduler = scheduler or study.run.scheduler
    if scheduler:
        backend = "dask"
    stages, plan = build_stages(study)
    clock["sampling"] = time.perf_counter() - clock["start"]
    size = study.run.chunk_size
    results = folder / "results"
    tasks, done, notes = [], {}, []
    fingerprint = study.fingerprint()
    for stage, frame in stages.items():
        for k, start in enumerate(range(0, len(frame), size)):
            path = results / _part_name(stage, k)
            if path.exists():
                expected = {"fingerprint": fingerprint, "stage": stage, "task": k, "first_row": start,
                            "rows": min(size, len(frame) - start)}
                _, reason = read_part(path, expected)
                if reason is None:
                    done[stage, k] = expected["rows"]
                    continue
                notes.append(_reject(path, reason))
            tasks.append((stage, k, start))
    done_drops = sum(done.values())
    total = sum(len(f) for f in stages.values())
    t_sim = time.perf_counter()
    bar = tqdm(total=total, initial=done_drops, unit="drop", unit_scale=True, disable=not progress,
               desc=f"{study.name}", dynamic_ncols=True, smoothing=0.1)
    simulated = 0
    try:
        calls = (delayed(_work)(study, stage, k, stages[stage].iloc[start:start + size], results, start)
                 for stage, k, start in tasks)
        in_process, _ = execution(sum(min(size, len(stages[stage]) - start) for stage, _, start in tasks), jobs,
                                  backend, asked)
        if in_process:
            outputs = (_work(study, stage, k, stages[stage].iloc[start:start + size], results, start)
                       for stage, k, start in tasks)
            for stage, k, rows in outputs:
                done[stage, k] = rows
                bar.update(rows)
                simulated += rows
        else:
            with _backend(jobs, backend, scheduler):
                # the backend comes from parallel_config for dask and loky (an
                # explicit Parallel(backend=...) would drop the initializer)
                kwargs = {} if backend in ("dask", "loky") else {"backend": backend}
                watch = (parallel_config(backend="loky", initializer=_end_with, initargs=(os.getpid(),))
                         if backend == "loky" else contextlib.nullcontext())
                with watch:
                    parallel = Parallel(n_jobs=jobs, return_as="generator_unordered", **kwargs)
                    for stage, k, rows in parallel(calls):
                        done[stage, k] = rows
                        bar.update(rows)
                        simulated += rows
    finally:
        bar.refresh()
        bar.close()
    clock["simulation"] = time.perf_counter() - t_sim
    t_load = time.perf_counter()
    parts = {stage: [results / _part_name(stage, k) for k in range(len(range(0, len(frame), size)))]
             for stage, frame in stages.items()}
    tables = StageTables(parts, {stage: _with_stage(frame.iloc[:0], stage) for stage, frame in stages.items()})
    del stages                                  # the inputs are in the parts now
    clock["loading"] = time.perf_counter() - t_load
    return RunOutcome(study, folder, tables, plan, clock, simulated, total, notes)
