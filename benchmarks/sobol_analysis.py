"""Time and memory of the Sobol analysis: SALib's ``sobol.analyze`` against ours.

What a study with a Sobol ranking asks of the analysis: the indices with
bootstrap intervals at N base samples and again at N/4 and N/2 (the
convergence table), second order off, 6 parameters (the rod-glass study),
200 resamples (``DEFAULT_RESAMPLES``). No drops are needed: the outputs are
an Ishigami-like function of the plan's first three columns plus smaller
terms in the other three, saved to a file once per size.

Every measurement runs in a fresh process that loads those outputs, so its
peak resident memory (VmHWM) is that of one analysis (besides the
imports and the outputs, given as "before"); the
processes alternate old, new, old, new, ... because this machine's speed
drifts by +-25 %. CPU seconds (all threads) are given besides the wall
clock: on a busy machine they are the steadier figure.

Usage::

    python benchmarks/sobol_analysis.py                 # 2^14, 2^16, 2^18, 2 rounds
    python benchmarks/sobol_analysis.py --powers 14 16 --rounds 3
"""
from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

DIMENSION = 6
RESAMPLES = 200
LEVELS = (4, 2, 1)  # N/4, N/2, N: the convergence table and the full analysis


def _outputs(base, seed=3):
    """Outputs of a 6-parameter Sobol' plan with `base` base samples. [-]"""
    from hopscape.sensitivity import sobol_plan
    from hopscape.test_functions import ishigami

    plan = sobol_plan([f"p{i}" for i in range(DIMENSION)], base, seed=seed)
    x = np.pi * (2.0 * plan.unit - 1.0)
    return ishigami(x[:, 0], x[:, 1], x[:, 2]) + 0.5 * x[:, 3] + 0.2 * x[:, 4] * x[:, 5]


def _analyse(path, y, base):
    """Run one path on the three levels; seconds taken."""
    rows = DIMENSION + 2
    start = time.perf_counter()
    for divisor in LEVELS:
        part = y[: base // divisor * rows]
        if path == "old":
            from SALib.analyze import sobol

            problem = {"num_vars": DIMENSION, "names": [f"p{i}" for i in range(DIMENSION)],
                       "bounds": [[0.0, 1.0]] * DIMENSION}
            sobol.analyze(problem, part, calc_second_order=False, num_resamples=RESAMPLES, seed=7)
        else:
            from hopscape.sensitivity import _saltelli

            _saltelli.analyse(part, DIMENSION, False, 0.95, RESAMPLES, 7)
    return time.perf_counter() - start


def _child(path, file, base):
    y = np.load(file)
    import SALib.analyze.sobol  # noqa: F401  imports outside the clock and the baseline
    import hopscape.sensitivity  # noqa: F401

    baseline = _resident_mb("VmHWM")
    before = resource.getrusage(resource.RUSAGE_SELF)
    seconds = _analyse(path, y, base)
    after = resource.getrusage(resource.RUSAGE_SELF)
    cpu = after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime
    print(json.dumps({"seconds": seconds, "cpu": cpu, "peak_mb": _resident_mb("VmHWM"), "baseline_mb": baseline}))


def _resident_mb(field):
    """A memory figure of this process from /proc/self/status [MB].

    VmHWM, the peak resident size, starts afresh at exec; ``ru_maxrss``
    would carry the parent's peak over (Linux keeps it across fork and
    exec).
    """
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1]) / 1024
    raise RuntimeError(f"no {field} in /proc/self/status")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--powers", type=int, nargs="+", default=[14, 16, 18], help="base samples 2^k")
    parser.add_argument("--rounds", type=int, default=2, help="old/new pairs per size")
    parser.add_argument("--child", nargs=3, metavar=("PATH", "FILE", "BASE"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        _child(args.child[0], args.child[1], int(args.child[2]))
        return
    print(f"{DIMENSION} parameters, {RESAMPLES} resamples, levels N/4, N/2, N; "
          "old = SALib sobol.analyze, new = hopscape.sensitivity._saltelli")
    print(f"{'N':>8} {'path':>4} {'wall s':>8} {'CPU s':>8} {'peak RSS MB':>12} {'(before MB)':>12}")
    with tempfile.TemporaryDirectory() as folder:
        for power in args.powers:
            base = 2 ** power
            file = Path(folder) / f"y{power}.npy"
            np.save(file, _outputs(base))
            found = {"old": [], "new": []}
            for _ in range(args.rounds):
                for path in ("old", "new"):
                    out = subprocess.run([sys.executable, __file__, "--child", path, str(file), str(base)],
                                         check=True, capture_output=True, text=True).stdout
                    result = json.loads(out.strip().splitlines()[-1])
                    found[path].append(result)
                    print(f"{base:>8} {path:>4} {result['seconds']:>8.2f} {result['cpu']:>8.2f} {result['peak_mb']:>12.0f} "
                          f"{result['baseline_mb']:>12.0f}", flush=True)
            old = min(r["seconds"] for r in found["old"])
            new = min(r["seconds"] for r in found["new"])
            old_cpu = min(r["cpu"] for r in found["old"])
            new_cpu = min(r["cpu"] for r in found["new"])
            print(f"{base:>8} best wall old {old:.2f} s, new {new:.2f} s ({old / new:.1f}x); best CPU old "
                  f"{old_cpu:.2f} s, new {new_cpu:.2f} s ({old_cpu / new_cpu:.1f}x); peak RSS "
                  f"old {max(r['peak_mb'] for r in found['old']):.0f} MB, "
                  f"new {max(r['peak_mb'] for r in found['new']):.0f} MB", flush=True)


if __name__ == "__main__":
    main()
