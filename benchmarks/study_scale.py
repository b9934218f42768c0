"""Wall time, simulation time and peak memory of whole study runs.

What a user waits for: ``hopscape run`` from the start of the process to the
report, against the part of it spent simulating (the run's own summary line
``time: ... simulation X s``). Each configuration runs in a fresh process
into a fresh folder; configurations alternate (A, B, A, B, ...) because this
machine's speed drifts by +-25 %. Memory is sampled every 50 ms with psutil
over the run's whole process tree: the peak of the run's own process and the
peak of the tree's sum (workers included).

Usage::

    python benchmarks/study_scale.py --study rod-glass --samples 262144 --jobs 2
    python benchmarks/study_scale.py --study quick --jobs 1 study 2 --rounds 3
    python benchmarks/study_scale.py --study rod-glass --samples 16384 --jobs 1 2
    python benchmarks/study_scale.py --study quick --jobs 2 --backends loky dask
    python benchmarks/study_scale.py --study rod-glass --backends dask --chunk-sizes 20000 1000

Per-task overhead: the same study with two chunk sizes (``run.chunk_size``,
drops per task) on one backend; the extra simulation time over the extra
tasks is what a task costs beyond its drops.
"""
from __future__ import annotations

import argparse
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import psutil

ROOT = Path(__file__).resolve().parents[1]


def _study_text(name, samples, chunk_size=None):
    text = (ROOT / "studies" / f"{name}.yaml").read_text(encoding="utf-8")
    if chunk_size:
        text, count = re.subn(r"^run: \{", f"run: {{chunk_size: {chunk_size}, ", text, flags=re.M)
        if count != 1:
            raise SystemExit(f"{name}: no 'run: {{...}}' line to set the chunk size in")
    if samples:
        text, count = re.subn(r"samples: \d+", f"samples: {samples}", text)
        if count != 1:
            raise SystemExit(f"{name}: no single 'samples:' to change")
    return text


def _drops(study_file):
    import hopscape
    from hopscape.plan import count_drops

    return sum(count_drops(hopscape.load_study(study_file)).values())


def run_once(study_file, folder, jobs, backend):
    """One fresh run; (wall [s], simulation [s], main peak RSS [B], tree peak RSS [B])."""
    command = [sys.executable, "-m", "hopscape.cli", "run", str(study_file), "--out", str(folder), "--quiet",
               "--fresh", "--backend", backend] + ([] if jobs == "study" else ["--jobs", jobs])
    start = time.perf_counter()
    proc = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    main = psutil.Process(proc.pid)
    main_peak = tree_peak = 0
    while proc.poll() is None:
        try:
            tree = [main] + main.children(recursive=True)
            sizes = []
            for p in tree:
                try:
                    sizes.append(p.memory_info().rss)
                except psutil.Error:
                    sizes.append(0)
            main_peak, tree_peak = max(main_peak, sizes[0]), max(tree_peak, sum(sizes))
        except psutil.Error:
            pass
        time.sleep(0.05)
    wall = time.perf_counter() - start
    out, err = proc.communicate()
    if proc.returncode != 0:
        raise SystemExit(f"run failed ({proc.returncode}): {err.strip()}")
    found = re.search(r"simulation ([0-9.]+) s", out)
    return wall, float(found.group(1)), main_peak, tree_peak


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--study", default="rod-glass")
    parser.add_argument("--samples", type=int, default=None, help="Sobol base samples (default: the study's)")
    parser.add_argument("--jobs", nargs="+", default=["2"],
                        help="worker counts given as --jobs (workers used whatever the size), or 'study': the "
                             "study's own run.jobs, where a small study stays in one process")
    parser.add_argument("--backends", nargs="+", default=["loky"])
    parser.add_argument("--chunk-sizes", type=int, nargs="+", default=[None])
    parser.add_argument("--rounds", type=int, default=2)
    args = parser.parse_args(argv)
    configs = [(j, b, c) for b in args.backends for j in args.jobs for c in args.chunk_sizes]
    results = {c: [] for c in configs}
    with tempfile.TemporaryDirectory() as tmp:
        files = {}
        for chunk in args.chunk_sizes:
            files[chunk] = Path(tmp) / f"{args.study}-{chunk}.yaml"
            files[chunk].write_text(_study_text(args.study, args.samples, chunk), encoding="utf-8")
        drops = _drops(files[args.chunk_sizes[0]])
        for r in range(args.rounds):
            for jobs, backend, chunk in configs:
                got = run_once(files[chunk], Path(tmp) / "run", jobs, backend)
                results[jobs, backend, chunk].append(got)
                print(f"round {r + 1}: jobs {jobs} {backend:8s} chunk {chunk or 'study'}: wall {got[0]:6.2f} s  "
                      f"simulation {got[1]:6.2f} s  "
                      f"wall/simulation {got[0] / got[1]:4.2f}  main peak {got[2] / 1e6:6.0f} MB  "
                      f"tree peak {got[3] / 1e6:6.0f} MB", flush=True)
    print(f"\n{args.study}" + (f" at {args.samples} base samples" if args.samples else "") + " (medians):")
    first = configs[0]
    for config in configs:
        walls = [g[0] for g in results[config]]
        sims = [g[1] for g in results[config]]
        wall_ratio = statistics.median(w / v for w, v in zip(walls, [g[0] for g in results[first]]))
        sim_ratio = statistics.median(w / v for w, v in zip(sims, [g[1] for g in results[first]]))
        print(f"  jobs {config[0]} {config[1]:8s} chunk {config[2] or 'study'}: wall {statistics.median(walls):6.2f} s, "
              f"simulation {statistics.median(sims):6.2f} s, main peak {max(g[2] for g in results[config]) / 1e6:.0f} MB, "
              f"tree peak {max(g[3] for g in results[config]) / 1e6:.0f} MB; against the first (same round): "
              f"wall {wall_ratio:.2f}, simulation {sim_ratio:.2f}")
    if len(args.chunk_sizes) == 2 and all(args.chunk_sizes):
        for jobs, backend in {(j, b) for j, b, _ in configs}:
            big, small = sorted(args.chunk_sizes, reverse=True)
            tasks = [-(-drops // size) for size in (big, small)]
            extra = statistics.median(s[1] - b[1] for s, b in zip(results[jobs, backend, small],
                                                                   results[jobs, backend, big]))
            print(f"  per-task overhead, jobs {jobs} {backend}: {extra:.2f} s more for {tasks[1] - tasks[0]} more "
                  f"tasks on {jobs} workers = {extra * (int(jobs) if jobs.isdigit() else 1) / (tasks[1] - tasks[0]) * 1e3:.1f} ms per task")


if __name__ == "__main__":
    main()
