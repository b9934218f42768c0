"""Where the kernel's time goes: contact search, flight peaks, the rest.

Runs ``sim.simulate`` on the benchmark population (``sim.bench``) and times
the calls to ``sim.search.next_contact`` and ``sim.peaks.flight_peaks``
inside it (as ``sim.drop`` calls them); "rest" is impacts and bookkeeping. Best of ``--repeat`` runs
(this machine is noisy: compare two versions of the code by running this
script alternately on both, several times, e.g. one checkout on
``PYTHONPATH``).

    python benchmarks/kernel_split.py --drops 65536
    python benchmarks/kernel_split.py --drops 65536 --json
"""
from __future__ import annotations

import argparse
import json
import time

from hopscape import sim
import hopscape.sim.drop
from hopscape.sim.bench import IMPACTS, population


def _timed(table, name):
    inner = getattr(sim.drop, name)

    def wrapper(*args, **kwargs):
        start = time.perf_counter()
        out = inner(*args, **kwargs)
        table[name] = table.get(name, 0.0) + time.perf_counter() - start
        return out

    setattr(sim.drop, name, wrapper)


def split(drops, repeat=5):
    """Seconds per 100,000 drops: total, search, peaks, rest (best run)."""
    args = population(drops, seed=1)
    table = {}
    for name in ("next_contact", "flight_peaks"):
        _timed(table, name)
    best = None
    for _ in range(repeat):
        table.clear()
        start = time.perf_counter()
        sim.simulate(*args, impacts=IMPACTS)
        total = time.perf_counter() - start
        row = (total, table["next_contact"], table["flight_peaks"])
        best = row if best is None or row[0] < best[0] else best
    total, search, peaks = (v * 1e5 / drops for v in best)
    return {"drops": drops, "drops_per_second": 1e5 / total, "seconds_per_100k": total,
            "search": search, "peaks": peaks, "rest": total - search - peaks}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drops", type=int, default=65536)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--json", action="store_true")
    args = parser.parse_args()
    out = split(args.drops, args.repeat)
    if args.json:
        print(json.dumps(out))
    else:
        print(f"{out['drops_per_second']:,.0f} drops/s; seconds per 100,000 drops: "
              f"total {out['seconds_per_100k']:.3f}, search {out['search']:.3f}, "
              f"peaks {out['peaks']:.3f}, rest {out['rest']:.3f}")


if __name__ == "__main__":
    main()
