"""Files written whole or not at all.

Every output hopscape writes (result parts, batch tables, maps and their
CSV files, the sensitivity tables, picks, the report) goes through
:func:`atomic_write`: the content goes to a temporary file in the same
folder, is flushed to disk, and only then replaces the final name. A full
disk, a crash or Ctrl-C at any point leaves the earlier file (if any)
untouched and no half-written file or temporary behind.
"""
from __future__ import annotations

import os
from contextlib import contextmanager
from pathlib import Path

from .errors import InputError


@contextmanager
def atomic_write(path):
    """Context manager giving a temporary path to write; on success it
    replaces ``path``.

    Parameters
    ----------
    path : str or pathlib.Path
        The final file; its folder must exist.

    Yields
    ------
    pathlib.Path
        Where to write (beside ``path``, same file ending, so that writers
        that choose the format by ending still do).
    """
    path = Path(path)
    tmp = path.with_name(f".{path.stem}.tmp{os.getpid()}{path.suffix}")
    try:
        yield tmp
        with open(tmp, "rb+") as handle:
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:  # Ctrl-C and a full disk included: leave nothing half-written
        tmp.unlink(missing_ok=True)
        raise


def write_text(path, text):
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    with atomic_write(path) as tmp:
        Path(tmp).write_text(text, encoding="utf-8")


def write_csv(frame, path, keep_same=False):
    """Write a table as CSV (without its index) to ``path`` atomically.

    ``keep_same``: leave a file that already holds exactly this table alone,
    time and all (what was made from it stays current)."""
    if keep_same:
        text = frame.to_csv(index=False)
        if Path(path).is_file() and Path(path).read_text(encoding="utf-8") == text:
            return
    with atomic_write(path) as tmp:
        frame.to_csv(tmp, index=False)


def refuse_overwriting_input(output, *inputs, option="--out"):
    """InputError when ``output`` names one of the ``inputs`` (or is a folder)."""
    output = Path(output)
    for given in inputs:
        if output.exists() and Path(given).exists() and os.path.samefile(output, given):
            raise InputError(f"{option} {output} is the input file {given}; choose another output name "
                             "(nothing was overwritten)")
    if output.is_dir():
        raise InputError(f"{option} {output} is a folder; give a file name ending in .csv or .parquet")
    if output.suffix.lower() not in (".csv", ".parquet", ".pq"):
        raise InputError(f"{option} {output}: a table is written as .csv or .parquet (by the file ending), got "
                         f"{output.suffix or 'no ending'}")


#: The file a run holds locked in its folder while it writes there.
LOCK_FILE = ".hopscape-lock"
_held = {}   # folder -> (open lock file, holds): a process may nest its own holds


@contextmanager
def folder_lock(folder):
    """Hold the run folder for this process while it writes there.

    A second run into a busy folder is refused at once, naming the first
    (its process id and start time). The lock is an ``flock`` on
    :data:`LOCK_FILE`: the operating system releases it when the holder
    ends, however it ends (``kill -9`` included), so a dead run never
    leaves the folder stuck.
    """
    import fcntl
    import time

    folder = Path(folder).resolve()
    if folder in _held:                      # the same process, one level down: already held
        handle, holds = _held[folder]
        _held[folder] = (handle, holds + 1)
        try:
            yield folder
        finally:
            handle, holds = _held[folder]
            _held[folder] = (handle, holds - 1)
        return
    folder.mkdir(parents=True, exist_ok=True)
    handle = open(folder / LOCK_FILE, "a+")
    try:
        fcntl.flock(handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        handle.seek(0)
        holder = handle.read().strip() or "another process"
        handle.close()
        raise InputError(f"{folder} is busy: {holder} is writing into it; wait for it to finish or choose "
                         "another --out") from None
    handle.seek(0)
    handle.truncate()
    handle.write(f"hopscape run (process {os.getpid()}, started {time.strftime('%Y-%m-%d %H:%M:%S')})")
    handle.flush()
    _held[folder] = (handle, 1)
    try:
        yield folder
    finally:
        del _held[folder]
        handle.close()                       # closing releases the flock


def read_table(path, what="table"):
    """A CSV or Parquet file (chosen by its ending) as a DataFrame.

    Parameters
    ----------
    path : str or pathlib.Path
    what : str
        What the file holds, for messages (``table``, ``track``).

    Raises
    ------
    InputError
        One line: a missing file, or why it cannot be read.
    """
    import pandas as pd

    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such {what} file")
    kind = "Parquet" if path.suffix.lower() in (".parquet", ".pq") else "CSV"
    try:
        if kind == "Parquet":
            return pd.read_parquet(path)
        # exports of spreadsheets and tracking tools often write ", " between cells
        return pd.read_csv(path, skipinitialspace=True)
    except Exception as exc:  # noqa: BLE001 - any unreadable file: one line, no traceback
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(f"{path}: cannot read the {what} as {kind} ({first})") from None

