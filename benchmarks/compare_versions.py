"""Time two checkouts of ``sim/`` against each other, alternately, in one
process (this machine is noisy: separate runs minutes apart differ by up to
15%, alternating calls much less).

    git worktree add /tmp/before HEAD~1
    python benchmarks/compare_versions.py /tmp/before . --repeat 15

Each checkout's ``sim/`` is copied under its own package name, then both
simulate the same benchmark population in turn; prints best and mean drops
per second of each.
"""
from __future__ import annotations

import argparse
import importlib
import os
import shutil
import sys
import tempfile
import time

from hopscape.options import positive_int  # the commands' own check: a whole number >= 1


def load(checkout, name):
    """Import ``checkout/sim`` as package ``name``."""
    root = tempfile.mkdtemp()
    shutil.copytree(os.path.join(checkout, "sim"), os.path.join(root, name),
                    ignore=shutil.ignore_patterns("__pycache__"))
    for folder, _, files in os.walk(os.path.join(root, name)):
        for file in files:
            if file.endswith(".py"):
                path = os.path.join(folder, file)
                with open(path) as f:
                    text = f.read()
                with open(path, "w") as f:
                    f.write(text.replace("from sim.", f"from {name}.").replace("import sim.", f"import {name}."))
    sys.path.insert(0, root)
    return importlib.import_module(name)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("first")
    parser.add_argument("second")
    parser.add_argument("--drops", type=positive_int(None), default=131072)
    parser.add_argument("--repeat", type=positive_int(None), default=15)
    args = parser.parse_args()
    for checkout in (args.first, args.second):
        if not os.path.isdir(os.path.join(checkout, "sim")):
            parser.error(f"checkout must be a folder holding sim/, got {checkout!r}")
    runs = []
    for label, checkout in (("first", args.first), ("second", args.second)):
        module = load(checkout, f"sim_{label}")
        bench = importlib.import_module(f"sim_{label}.bench")
        runs.append((label, module, bench.population(args.drops, seed=1), bench.IMPACTS))
    times = {label: [] for label, *_ in runs}
    for i in range(args.repeat):
        for label, module, population, impacts in (runs if i % 2 == 0 else runs[::-1]):
            start = time.perf_counter()
            module.simulate(*population, impacts=impacts)
            times[label].append(time.perf_counter() - start)
    for (label, *_), checkout in zip(runs, (args.first, args.second)):
        seconds = times[label]
        print(f"{checkout}: best {args.drops / min(seconds):,.0f} drops/s, "
              f"mean {args.drops * len(seconds) / sum(seconds):,.0f} drops/s")


if __name__ == "__main__":
    main()
