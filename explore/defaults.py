"""Defaults every command and the Python API share, declared once.

This module imports nothing, so that ``import hopscape`` and the command
line's argument parser stay light.
"""

#: Impacts followed per drop unless a study (``run.impacts``), an
#: ``--impacts`` option or a call says otherwise. [-]
#: Why 8: on every example study, following 8 impacts decides the study's
#: event the same as following 24 in at least 99.4 % of drops (6 impacts:
#: 98.4 % on ``quick``, whose long pins strike end over end), at about a
#: quarter of the cost of 24. The benchmark population keeps its own fixed
#: 3 (``hopscape.sim.bench.IMPACTS``), a measuring setting, not an answer.
IMPACTS = 8

#: Below this many drops to simulate, a run stays in its own process even
#: when it may use worker processes: starting two loky workers and importing
#: the package in them costs about 2 s on the project's two-core machine,
#: while one process simulates about 115,000 study drops per second (8
#: impacts; ``hopscape run quick`` with ``--jobs 1`` and ``2``, alternated:
#: 1.6 s against 2.4-3.5 s for 184,224 drops). Two workers save half the
#: simulation, so they pay from about 2 x 115,000 x 2 s = 460,000 drops. [-]
WORKERS_PAY_FROM = 500_000


def execution(drops, jobs, backend, asked=False):
    """Where a run's drops are simulated, and why.

    The size rule applies to the study's own ``run.jobs``; workers asked
    for outright (``--jobs``, ``jobs=``) are used whatever the size.

    Parameters
    ----------
    drops : int
        Drops still to simulate. [-]
    jobs : int
        Worker processes the study or command allows.
    backend : str
        ``loky``, ``threading``, ``sequential`` or ``dask``.
    asked : bool
        True when the jobs were given on the command line or in a call.

    Returns
    -------
    in_process : bool
        True to simulate in the run's own process.
    reason : str
        One line for ``hopscape check`` and the run's summary.
    """
    if backend == "dask":
        return False, f"on the Dask cluster ({jobs} worker(s) when it is started here)"
    if backend == "sequential" or jobs == 1:
        return True, "in this process (run.jobs 1 or backend sequential)"
    if backend == "loky" and drops < WORKERS_PAY_FROM and not asked:
        return True, (f"in this process: {drops:,} drops are below the {WORKERS_PAY_FROM:,} from which starting "
                      f"{jobs} worker processes pays")
    return False, f"on {jobs} {'threads' if backend == 'threading' else 'worker processes'} ({backend})"
