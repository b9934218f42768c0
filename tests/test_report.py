"""``report.html`` of a run (explore/report.py).

The shared small CLI run (maps, curve, robustness, Sobol ranking, picks,
safe regions); a tiny grid-only run, which must leave out what it did not
compute; a study whose event can never happen (the energy bound), which
must say so first; and a study under an impact law that creates energy.
"""
import html
import re

import pandas as pd
import pytest

from conftest import PIN, SMALL, SMALL_COUNTS, grid, run_text, study_yaml, uniform
from hopscape.analysis import analyse, headline
from hopscape.cli import main
from hopscape.maps import energy_note
from hopscape.regions import region_sentences
from hopscape.report import SAFETY, write_report
from hopscape.study import parse_study


def page_of(folder):
    return (folder / "report.html").read_text(encoding="utf-8")


def has_cells(page, *cells):
    """``cells`` stand side by side in one row of a table on ``page``."""
    return re.search("".join(rf"<td[^>]*>{re.escape(c)}</td>" for c in cells), page) is not None


def test_report_has_energy_bound_and_safety_notes(small_run):
    page = page_of(small_run)
    study = parse_study(SMALL)
    assert html.escape(energy_note(study)) in page
    assert "the centre can never rise above its release height" in page
    assert html.escape(SAFETY) in page
    assert "wear eye protection" in page
    # every picture it shows exists
    for src in re.findall(r'<img src="([^"]+)"', page):
        assert (small_run / html.unescape(src)).is_file(), src


def test_report_names_the_study_and_shows_every_figure_and_file(small_run):
    page = page_of(small_run)
    assert "<title>small</title>" in page and "<h1>small</h1>" in page
    assert "pins tipping off a feeder step, small enough for the tests" in page      # the description
    images = re.findall(r'<img src="([^"]+)"', page)
    assert sorted(images) == sorted(["maps/map-angle-aspect_ratio.png", "maps/curve-angle.png",
                                     "maps/robustness-angle-aspect_ratio.png", "maps/ranking.png",
                                     "maps/ranking-convergence.png"])
    for link in (link for link in re.findall(r'<a href="([^"]+)"', page) if not link.startswith("#")):
        assert (small_run / html.unescape(link)).is_file(), link
    for heading in ("Regime maps", "Curves", "Robustness to release errors",
                    "Which quantities matter (Sobol indices)", "Recommended drop conditions"):
        assert re.search(rf"<h2( id=\w+)?>{re.escape(heading)}</h2>", page), heading


def test_report_describes_each_quantity_and_counts_the_drops(small_run):
    page = page_of(small_run)
    # how each quantity was given, with its unit (grid ends as in the study)
    assert has_cells(page, "grid", "2 to 6 in 5 steps")
    assert has_cells(page, "grid", "0 to 90 deg in 16 steps")
    assert has_cells(page, "uniform", "0.003 to 0.008 m")
    assert "Release tolerance: angle +-2 deg, height +-1 mm." in page
    for stage, drops in SMALL_COUNTS.items():
        assert has_cells(page, stage, str(drops)), stage
    assert "Drops simulated in this call: 2,496 of 2,496" in page


def test_tiny_run_report_leaves_out_what_was_not_computed(tmp_path):
    # three drops: one grid axis, nothing random, no robustness, no ranking
    text = study_yaml({
        "name": "tiny-report",
        "body": {**PIN, "aspect_ratio": 3.0},
        "contact": {"restitution": 0.9, "friction": 0.2},
        "release": {"height": 0.01, "angle": grid(0, 90, 3)},
        "metric": {"kind": "ratio", "reference": "centre"},
        "analyses": {"robustness": False},
        "run": {"jobs": 1, "impacts": 3},
    })
    outcome = run_text(text, tmp_path)
    path = write_report(outcome, analyse(outcome), {"simulation": 0.25})
    assert path == tmp_path / "report.html"
    page = page_of(tmp_path)
    assert "<h1>tiny-report</h1>" in page
    assert html.escape(SAFETY) in page
    assert "<img" not in page
    for heading in ("Regime maps", "Robustness to release errors", "Which quantities matter",
                    "Recommended drop conditions"):
        assert heading not in page, heading
    assert has_cells(page, "grid", "3")
    assert "Time: simulation 0.25 s." in page
    assert "Release tolerance" not in page          # no toleranced drops were made


def test_picks_table_has_plain_headings_with_units(small_run):
    page = page_of(small_run)
    table = page[page.index("<h2 id=picks>Recommended drop conditions</h2>"):]
    table = table[:table.index("</table>")]
    headings = re.findall(r"<th>([^<]*)</th>", table)
    assert headings == ["rank", "aspect ratio [-]", "angle [deg]", "goal met [%]", "95 % interval [%]",
                        "margin [grid steps]", "outcome flips [%]", "mean value [-]", "value change [-]",
                        "angle window [deg]", "note"]
    assert all("_" not in h for h in headings)
    picks = pd.read_csv(small_run / "picks.csv")
    first = picks.iloc[0]
    assert has_cells(page, "1", f"{first['aspect_ratio']:.4g}", f"{first['angle_deg']:.4g}",
                     f"{100 * first['goal_probability']:.0f}",
                     f"{100 * first['goal_low']:.0f}-{100 * first['goal_high']:.0f}", str(first["margin_steps"]))
    assert '<table class=picks>' in page and "td.words{" in page


def test_safe_regions_are_written_out(small_run):
    page = page_of(small_run)
    regions = pd.read_csv(small_run / "safe-regions.csv")
    assert "<h3>Where the goal holds under the tolerance</h3>" in page
    for line in region_sentences(regions):
        assert f"<li>{html.escape(line)}</li>" in page


NEVER = {
    # from rest the centre can never rise above its release height (the
    # energetic law never creates energy; docs/physics.md section 6), so the
    # event of this study never happens; 12 cells x 1 exact drop (nothing is
    # random) + 12 x 2 toleranced drops, released by their lowest point so
    # none starts inside the floor: 36 drops
    "name": "never",
    "body": {**PIN, "aspect_ratio": grid(2.0, 5.0, 3)},
    "contact": {"restitution": 0.9, "friction": 0.2},
    "release": {"height": 0.01, "height_of": "bottom", "angle": grid(0, 90, 4)},
    "metric": {"kind": "ratio", "reference": "centre", "threshold": 1.0},
    "tolerance": {"draws": 2},
    "analyses": {"maps": [{"x": "angle", "y": "aspect_ratio"}], "picks": {"count": 2}},
    "run": {"jobs": 1, "impacts": 3},
}


@pytest.mark.slow
def test_a_study_where_the_event_never_happens_says_so_first(tmp_path, capsys):
    study_path = tmp_path / "never.yaml"
    study_path.write_text(study_yaml(NEVER), encoding="utf-8")
    assert main(["run", str(study_path), "--out", str(tmp_path / "run"), "--quiet", "--backend", "sequential"]) == 0
    sentence = ("In all 36 drops of this study the event (best later bounce above 1 x the release height of the "
                "centre) never happened, so every map and pick below is flat: widen the ranges or change the "
                "threshold to find where it starts.")
    assert capsys.readouterr().out.splitlines()[0] == sentence
    page = page_of(tmp_path / "run")
    assert page.index(html.escape(sentence)) < page.index("<b>Safety.</b>")
    assert "No cell meets the target 80% under the release tolerance" in page


def test_energy_creating_law_changes_the_bound_and_the_footnote(tmp_path):
    # Newton's law can create energy when slip reverses or the contact
    # sticks (Stronge, J. Appl. Mech. 58:1049, 1991); with restitution 0.95
    # and friction up to 1, some of these 72 drops do
    text = study_yaml({
        "name": "newton",
        "body": {**PIN, "aspect_ratio": grid(2.0, 8.0, 4)},
        "contact": {"law": "newton", "restitution": 0.95, "friction": uniform(0.05, 1.0)},
        "release": {"height": 0.02, "angle": grid(5, 85, 9)},
        "metric": {"kind": "ratio", "reference": "centre"},
        "analyses": {"draws": 2, "robustness": False},
        "run": {"jobs": 1, "impacts": 6},
    })
    outcome = run_text(text, tmp_path)
    assert outcome.tables["grid"]["energy_gain"].any()
    write_report(outcome, analyse(outcome), {})
    page = page_of(tmp_path)
    assert "the centre can never rise above its release height" not in page
    assert "Impacts only take energy away" not in page
    assert "Energy bound: none here. The newton law can create energy at an impact" in page
    assert ("Some drops had an impact that created energy: the newton law can, with stick as well as with slip "
            "reversal (Stronge, J. Appl. Mech. 58:1049, 1991).") in page


def test_headline_when_the_event_always_happens():
    study = parse_study(study_yaml(NEVER))
    table = pd.DataFrame({"event": [True, True, False], "status": ["impacts", "impacts", "inside floor"]})
    # the drop that would start inside the floor is no drop: the event happened in all 2
    assert headline(study, {"grid": table}) == (
        "In all 2 drops of this study the event (best later bounce above 1 x the release height of the centre) "
        "always happened, so every map and pick below is flat: widen the ranges or change the threshold to find "
        "where it stops.")
    assert headline(study, {"grid": table.assign(event=[True, False, False])}) is None


def test_the_answer_comes_first(small_run):
    # the best pick (with its coordinates), where the goal holds and what
    # matters most stand above the evidence, as the terminal says them
    import pandas as pd
    page = page_of(small_run)
    box = page[page.index("<b>In short</b>"):page.index("<h2>")]
    best = pd.read_csv(small_run / "picks.csv").iloc[0]
    assert f"<b>best pick:</b> aspect ratio {best['aspect_ratio']:.6g}, release angle {best['angle_deg']:.6g} deg" in box
    assert f"goal met in {best['goal_probability']:.0%}" in box
    assert "<b>where the goal holds under tolerance:</b>" in box and "<b>matters most:</b>" in box
    assert 'href="#picks"' in box and "<h2 id=picks>" in page


def test_no_energy_bound_is_claimed_for_a_study_on_a_slope(tmp_path):
    # on an inclined floor a body gains energy moving downhill
    # (docs/physics.md section 6): neither the note nor the report's own
    # sentence may say the centre's ratio is at most 1
    text = study_yaml({
        "name": "slope",
        "body": {**PIN, "aspect_ratio": 3.0},
        "contact": {"restitution": 0.9, "friction": 0.2},
        "release": {"height": 0.02, "angle": grid(0, 90, 3), "floor_angle": 30},
        "metric": {"kind": "ratio", "reference": "centre"},
        "analyses": {"robustness": False},
        "run": {"jobs": 1, "impacts": 3},
    })
    outcome = run_text(text, tmp_path)
    write_report(outcome, analyse(outcome), {})
    page = page_of(tmp_path)
    assert "Energy bound: none here. On an inclined floor" in page
    assert "rebound ratio is at most 1" not in page


def test_the_best_pick_says_when_a_surer_pick_has_less_room(small_run):
    # picks are ranked by margin first (README, "Recommended drop
    # conditions"): when a later pick meets the goal more often, the answer
    # says so instead of leaving the reader to wonder
    import pandas as pd
    from types import SimpleNamespace

    from hopscape.answer import answer_lines
    study = parse_study(SMALL)
    picks = pd.read_csv(small_run / "picks.csv")
    picks["meets_target"] = True
    picks["goal_probability"] = [0.9, 0.95, 1.0, 0.8, 0.7][:len(picks)]
    art = SimpleNamespace(picks=picks, safe_regions=None, ranking=None)
    best = dict(answer_lines(study, art))["best pick"]
    assert "pick 2 meets the goal more often, 95%, with less room" in best
    picks["goal_probability"] = sorted(picks["goal_probability"], reverse=True)
    assert "meets the goal more often" not in dict(answer_lines(study, art))["best pick"]
