"""``report.html`` of a run (explore/report.py)."""
import html
import re

from conftest import SMALL
from explore.maps import energy_note
from explore.report import SAFETY
from explore.study import parse_study


def test_report_has_energy_bound_and_safety_notes(small_run):
    page = (small_run / "report.html").read_text(encoding="utf-8")
    study = parse_study(SMALL)
    assert html.escape(energy_note(study)) in page
    assert "the centre can never rise above its release height" in page
    assert html.escape(SAFETY) in page
    assert "wear eye protection" in page
    # every picture it shows exists
    for src in re.findall(r'<img src="([^"]+)"', page):
        assert (small_run / html.unescape(src)).is_file(), src
