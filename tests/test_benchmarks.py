"""Every benchmark script still starts (its --help), so a rename in the package cannot leave one broken."""
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.slow
@pytest.mark.parametrize("script", sorted(p.name for p in (ROOT / "benchmarks").glob("*.py")))
def test_benchmark_script_starts(script):
    done = subprocess.run([sys.executable, str(ROOT / "benchmarks" / script), "--help"], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr[-500:]
    assert "usage" in done.stdout.lower()
