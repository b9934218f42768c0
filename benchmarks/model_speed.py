"""Drops per second of each contact model on the benchmark population.

The default ``two-ends`` model runs the impulse engine and, where both ends
of a body touch within one contact duration (landings near flat, about 1 in
170 impacts of this population), integrates that contact
(``sim.pair_contact``). That integration costs the same for one drop as for
hundreds (its cost is its numpy calls), once per chunk and impact that has
a pair, so its share depends on the chunk: the kernel's own chunk
(``sim.drop.CHUNK_SIZE``) and a study's task (``run.chunk_size``, 20,000 in
the examples) are both timed. Models alternate within each round on this
noisy machine; the best of the rounds is kept.

    python benchmarks/model_speed.py
    python benchmarks/model_speed.py --drops 200000 --chunk-sizes 65536 20000 --rounds 3
    python benchmarks/model_speed.py --models two-ends impulse compliant --drops 20000
"""
from __future__ import annotations

import argparse
import time

from hopscape import sim
import hopscape.sim.bench  # noqa: F401  (sim.bench)
import hopscape.sim.damping


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drops", type=int, default=200_000, help="drops of the benchmark population")
    parser.add_argument("--models", nargs="+", default=["impulse", "two-ends"], choices=sim.MODELS)
    parser.add_argument("--chunk-sizes", nargs="+", type=int, default=[sim.drop.CHUNK_SIZE, 20_000])
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args(argv)
    shape, release, contact = sim.bench.population(args.drops)
    sim.simulate(shape, release, contact, impacts=sim.bench.IMPACTS, chunk_size=args.chunk_sizes[0])  # warm up
    best = {}
    for _ in range(args.rounds):
        for chunk in args.chunk_sizes:
            for model in args.models:
                start = time.perf_counter()
                sim.simulate(shape, release, contact, impacts=sim.bench.IMPACTS, chunk_size=chunk, model=model)
                elapsed = time.perf_counter() - start
                best[chunk, model] = min(best.get((chunk, model), float("inf")), elapsed)
    print(f"{args.drops} drops, {sim.bench.IMPACTS} impacts, best of {args.rounds} rounds")
    print(f"{'chunk':>8} {'model':>10} {'drops/s':>10} {'time / ' + args.models[0]:>16}")
    for chunk in args.chunk_sizes:
        for model in args.models:
            ratio = best[chunk, model] / best[chunk, args.models[0]]
            print(f"{chunk:>8} {model:>10} {args.drops / best[chunk, model]:>10,.0f} {ratio:>16.2f}")


if __name__ == "__main__":
    main()
