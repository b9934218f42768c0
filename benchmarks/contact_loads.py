"""What the contact model costs: the per-process table of the scaled
contact (sim.damping.contact_table) and the per-impact outputs
(sim.contact_load.impact_loads) on the benchmark population, against the
rigid simulation of the same drops, alternated.

    python benchmarks/contact_loads.py --drops 131072 --repeat 3
"""
from __future__ import annotations

import argparse
import time

from hopscape import sim
from hopscape.options import positive_int  # the commands' own check: a whole number >= 1
from hopscape.sim import bench, contact_load, damping
from hopscape.sim.materials import effective_modulus, material


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drops", type=positive_int("--drops"), default=131072)
    parser.add_argument("--impacts", type=positive_int("--impacts"), default=8)
    parser.add_argument("--repeat", type=positive_int("--repeat"), default=3)
    args = parser.parse_args()
    start = time.perf_counter()
    damping.contact_table()
    damping._forward()
    print(f"table of the scaled contact: {time.perf_counter() - start:.3f} s (once per process)")
    tablet, steel = material("mcc_tablet"), material("steel")
    e_star = effective_modulus(tablet.youngs_modulus, tablet.poisson, steel.youngs_modulus, steel.poisson)
    shape, release, contact = bench.population(args.drops)
    simulate, loads = [], []
    for _ in range(args.repeat):
        start = time.perf_counter()
        result = sim.simulate(shape, release, contact, impacts=args.impacts)
        simulate.append(time.perf_counter() - start)
        start = time.perf_counter()
        contact_load.impact_loads(result, e_star)
        loads.append(time.perf_counter() - start)
    impacts = int(result.count.sum())
    print(f"{args.drops} drops, {impacts} impacts: rigid simulation best {min(simulate):.3f} s, contact outputs "
          f"best {min(loads):.3f} s ({min(loads) / impacts * 1e9:.0f} ns per impact)")


if __name__ == "__main__":
    main()
