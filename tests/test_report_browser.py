"""``report.html`` opened in a real headless browser (Chromium).

A copy of the small run's report gets a script that, once the page has
loaded, writes into the page what the browser made of it: every image's
natural size (0 when it failed to load), the page's width against the
window's, and the height of the tallest row of the picks table. Chromium
prints the resulting DOM (``--dump-dom``); the test reads it back. It also
takes a screenshot, which is worth a look after changing the report.

Chromium comes from the Debian packages (``apt-get install chromium``);
``.ci/run`` installs it, so CI runs this test. Without it the test is
skipped.
"""
import json
import re
import shutil
import subprocess

import pytest

from hopscape.report import REPORT_FILE

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
WINDOW = (1200, 3000)         # [px] a laptop-sized window

PROBE = """<script>
window.addEventListener("load", () => {
  const rows = [...document.querySelectorAll("table.picks tr:not(:first-child)")]
    .map(r => r.getBoundingClientRect().height);
  const found = {
    images: [...document.images].map(i => [i.getAttribute("src"), i.complete, i.naturalWidth, i.naturalHeight]),
    pageWidth: document.documentElement.scrollWidth,
    windowWidth: window.innerWidth,
    tallestPickRow: Math.max(0, ...rows),
  };
  const out = document.createElement("pre");
  out.id = "probe";
  out.textContent = JSON.stringify(found);
  document.body.appendChild(out);
});
</script>"""

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (apt-get install chromium; "
                                                          ".ci/run installs it)")]


def chromium(*args, profile):
    """Run headless Chromium with a fresh profile and no network of its own; return stdout."""
    command = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", f"--window-size={WINDOW[0]},{WINDOW[1]}", *args]
    done = subprocess.run(command, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr[-2000:]
    return done.stdout


def test_report_renders_with_every_image_loaded(small_run, tmp_path):
    page = (small_run / REPORT_FILE).read_text(encoding="utf-8")
    probe = small_run / "report-probe.html"          # beside the report: the same relative image paths
    probe.write_text(page.replace("</body>", PROBE + "</body>"), encoding="utf-8")
    try:
        dom = chromium("--virtual-time-budget=20000", "--dump-dom", probe.as_uri(), profile=tmp_path / "profile-a")
    finally:
        probe.unlink()
    found = json.loads(re.search(r'<pre id="probe">(.*?)</pre>', dom, re.S).group(1))
    sources = [image[0] for image in found["images"]]
    assert sources == re.findall(r'<img src="([^"]+)"', page)
    assert len(sources) == 5
    for src, complete, width, height in found["images"]:
        # a PNG written at 130 dpi is several hundred pixels each way; 0 = broken
        assert complete and width > 300 and height > 200, src
    assert found["pageWidth"] <= found["windowWidth"], "the page is wider than the window"
    # notes wrap in a wide column: no row of picks is a tall sliver (one line is ~25 px)
    assert 0 < found["tallestPickRow"] < 120


def test_report_screenshot(small_run, tmp_path):
    shot = tmp_path / "report.png"
    chromium(f"--screenshot={shot}", (small_run / REPORT_FILE).as_uri(), profile=tmp_path / "profile-b")
    header = shot.read_bytes()[:24]
    assert header[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(header[16:20], "big"), int.from_bytes(header[20:24], "big")
    assert (width, height) == WINDOW
