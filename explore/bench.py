"""``hopscape bench``: drops per second on the benchmark population."""
from __future__ import annotations

import time

import numpy as np
from joblib import Parallel, delayed

from hopscape import sim
from hopscape.sim.bench import IMPACTS, population


def _run(n, seed):
    shape, release, contact = population(n, seed)
    start = time.perf_counter()
    result = sim.simulate(shape, release, contact, impacts=IMPACTS)
    return time.perf_counter() - start, int(np.sum(result.status == sim.drop.FAILED))


def run_bench(drops, jobs=1, repeat=3):
    """Best-of-``repeat`` wall time for ``drops`` drops over ``jobs`` processes.

    The population is drawn before the clock starts; only the simulation is
    timed (per worker), and with several jobs the slowest worker counts.

    Parameters
    ----------
    drops : int
        Drops of the benchmark population (``sim.bench.population``); with
        several jobs each worker simulates ``ceil(drops / jobs)``.
    jobs : int, optional
        Worker processes (joblib); 1 runs in this process.
    repeat : int, optional
        Timed repetitions; the fastest counts.

    Returns
    -------
    dict
        ``drops`` simulated per repetition, ``impacts`` per drop, ``jobs``,
        ``seconds`` (best wall time [s]), ``drops_per_second`` [1/s] and
        ``failed`` (drops whose contact search failed, last repetition).
    """
    best, failed = np.inf, 0
    per_job = -(-drops // jobs)
    for _ in range(repeat):
        if jobs == 1:
            seconds, failed = _run(drops, 1)
        else:
            out = Parallel(n_jobs=jobs)(delayed(_run)(per_job, seed) for seed in range(1, jobs + 1))
            seconds = max(s for s, _ in out)
            failed = sum(f for _, f in out)
        best = min(best, seconds)
    total = per_job * jobs if jobs > 1 else drops
    return {"drops": total, "impacts": IMPACTS, "jobs": jobs, "seconds": best,
            "drops_per_second": total / best, "failed": failed}
