"""Peak memory of one ``sim.simulate`` call on the benchmark population.

The engine's brief: 10^6 drops in one call stay under 500 MB. This runs
them in a fresh process (this script) and prints the process's peak
resident set (``ru_maxrss``: the population, the result and the chunk's
working memory together, plus the interpreter), the time and the failed
drops; ``--chunk-size`` tries another chunk than ``sim.drop.CHUNK_SIZE``.

    python benchmarks/memory.py
    python benchmarks/memory.py --drops 1000000 --chunk-size 32768 --json
"""
from __future__ import annotations

import argparse
import json
import resource
import time

import numpy as np

from hopscape import sim
from hopscape.options import positive_int  # the commands' own check: a whole number >= 1
from hopscape.sim.bench import IMPACTS, population


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drops", type=positive_int(None), default=1_000_000)
    parser.add_argument("--chunk-size", type=positive_int(None), default=sim.drop.CHUNK_SIZE)
    parser.add_argument("--json", action="store_true")
    args = parser.parse_args()
    shape, release, contact = population(args.drops, seed=1)
    start = time.perf_counter()
    result = sim.simulate(shape, release, contact, impacts=IMPACTS, chunk_size=args.chunk_size)
    seconds = time.perf_counter() - start
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # Linux reports KiB
    row = {"drops": args.drops, "chunk_size": args.chunk_size, "seconds": seconds,
           "peak_rss_mb": peak / 1e6, "peak_rss_mib": peak / 2 ** 20,
           "failed": int(np.sum(result.status == sim.drop.FAILED))}
    if args.json:
        print(json.dumps(row))
    else:
        print(f"{args.drops:,} drops x {IMPACTS} impacts, chunk {args.chunk_size:,}: {seconds:.2f} s, "
              f"peak RSS {row['peak_rss_mb']:.0f} MB ({row['peak_rss_mib']:.0f} MiB), {row['failed']} failed")


if __name__ == "__main__":
    main()
