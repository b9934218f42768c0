"""A run's result tables, read from its parts when they are asked for.

The workers write each finished chunk as a Parquet part themselves
(:mod:`explore.runner`), so the run's own process never holds a stage's
table while the drops are simulated. Afterwards :class:`StageTables` reads a
stage when it is first asked for, whole (``tables["grid"]``, kept for the
next ask) or only some of its columns (``tables.columns("sobol", [...])``,
not kept): a Sobol' ranking needs the ``sample`` and ``value`` of its
millions of rows, not their 29 columns, so a 2^18-sample study reads 3
columns in 0.6 s instead of 29 in 3 s and holds 50 MB instead of 410 MB.
"""
from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import pandas as pd


def read_parts(paths, columns=None) -> pd.DataFrame:
    """The parts ``paths`` as one table, in the given order.

    Parameters
    ----------
    paths : sequence of pathlib.Path
        Parquet parts of one stage, first row first.
    columns : sequence of str, optional
        Only these columns (all when None).
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    tables = [pq.read_table(path, columns=None if columns is None else list(columns)) for path in paths]
    # each part carries its own proof in the schema metadata; the first
    # part's pandas metadata serves all (same columns and types)
    schema = tables[0].schema
    return pa.concat_tables([t.replace_schema_metadata(schema.metadata) for t in tables]).to_pandas()


class StageTables(Mapping):
    """Per stage, the result table of a run, read from its parts on demand.

    A read-only mapping of stage name to :class:`pandas.DataFrame`, in
    stage order, as the plain dict it replaces.

    Parameters
    ----------
    parts : dict of str to list of pathlib.Path
        Per stage, its parts in row order (an empty list for a stage of
        no drops).
    empty : dict of str to pandas.DataFrame
        Per stage, the table to give when it has no parts.
    """

    def __init__(self, parts: dict, empty: dict):
        self._parts = {stage: [Path(p) for p in paths] for stage, paths in parts.items()}
        self._empty = empty
        self._read = {}

    def __getitem__(self, stage) -> pd.DataFrame:
        if stage not in self._read:
            paths = self._parts[stage]
            self._read[stage] = read_parts(paths) if paths else self._empty[stage]
        return self._read[stage]

    def __iter__(self):
        return iter(self._parts)

    def __len__(self):
        return len(self._parts)

    def columns(self, stage, names) -> pd.DataFrame:
        """Only the columns ``names`` of stage ``stage`` (read again each time
        unless the whole table was read already)."""
        names = list(names)
        if not self._parts[stage]:                # no drops: no metric columns either
            return self._empty[stage].reindex(columns=names)
        if stage in self._read:
            return self[stage][names]
        return read_parts(self._parts[stage], names)


def stage_columns(tables, stage, names) -> pd.DataFrame:
    """``names`` of ``tables[stage]``, reading no more than those columns
    where ``tables`` can (a :class:`StageTables`; a plain dict is sliced)."""
    if isinstance(tables, StageTables):
        return tables.columns(stage, names)
    return tables[stage][list(names)]
