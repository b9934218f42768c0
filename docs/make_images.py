"""Draw the README's pictures in docs/img/ again from the current code.

Runs the README's own examples through the installed ``hopscape`` command
(the one-drop example of the tour and ``studies/quick.yaml``), and the
scripts of their own in docs/ (the model comparison), into a
temporary folder and copies the pictures the README shows, so they can
never show an older version of the maps than the code draws. About half a
minute on two cores:

    python docs/make_images.py
"""
from __future__ import annotations

import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
IMAGES = ROOT / "docs" / "img"

#: The tour's one drop, as the README gives it.
DROP = ["drop", "--shape", "capsule", "--radius", "0.003", "--length", "0.024", "--height", "0.006",
        "--height-of", "bottom", "--angle", "50", "--restitution", "0.9", "--friction", "0.1", "--impacts", "8",
        "--reference", "bottom"]

#: Picture in docs/img -> where the examples write it (relative to their output folder).
FROM_DROP = {"strobe.png": "strobe.png", "energy.png": "energy.png", "bounces.png": "bounces.png"}
FROM_QUICK = {"map.png": "maps/map-angle-aspect_ratio.png", "robustness.png": "maps/robustness-angle-aspect_ratio.png",
              "ranking.png": "maps/ranking.png"}
#: Pictures drawn by a script of their own in docs/ (name -> script).
FROM_SCRIPTS = {"model-difference.png": "compare_models.py"}


def hopscape(*args):
    """Run ``python -m hopscape.cli`` from the repository root; stop on failure."""
    subprocess.run([sys.executable, "-m", "hopscape.cli", *args], cwd=ROOT, check=True, stdout=subprocess.DEVNULL)


def main():
    IMAGES.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as scratch:
        scratch = Path(scratch)
        hopscape(*DROP, "--out", str(scratch / "drop"))
        hopscape("run", str(ROOT / "studies" / "quick.yaml"), "--out", str(scratch / "quick"), "--quiet")
        for folder, pictures in ((scratch / "drop", FROM_DROP), (scratch / "quick", FROM_QUICK)):
            for name, source in pictures.items():
                shutil.copyfile(folder / source, IMAGES / name)
                print(f"wrote {IMAGES / name}")
    for name, script in FROM_SCRIPTS.items():
        subprocess.run([sys.executable, str(ROOT / "docs" / script), "--out", str(IMAGES / name)], cwd=ROOT,
                       check=True, stdout=subprocess.DEVNULL)
        print(f"wrote {IMAGES / name}")


if __name__ == "__main__":
    main()
