"""The rig plan (``hopscape plan``; docs/physics.md section 12): repeats
against Wilson's and Fleiss's formulas and scipy, the camera's arithmetic
by hand, the release-tolerance search, bad input and the command on an
example study."""
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.stats import binomtest, norm

from hopscape import sim
from hopscape.cli import main
from hopscape.rig.camera import (body_reach, camera_rate, drop_extent, fastest_point_speed, frames_rate,
                                 longest_exposure)
from hopscape.rig.conditions import at_condition
from hopscape.rig.output import PLAN_FILE, plan_text, section_html, update_report
from hopscape.rig.plan import RigPlan
from hopscape.rig.release import STEPS, GoalAt, largest_tolerance
from hopscape.rig.repeats import drops_to_estimate, drops_to_tell_apart, wilson_half_width
from hopscape.safety import SAFETY
from hopscape.study import load_study

QUICK = Path(__file__).resolve().parents[1] / "studies" / "quick.yaml"
Z = norm.ppf(0.975)


# --- repeats -------------------------------------------------------------

@pytest.mark.parametrize("n, k", [(381, 190), (50, 7), (200, 180), (12, 0), (30, 30)])
def test_wilson_half_width_is_scipys(n, k):
    # independent library: scipy.stats.binomtest(...).proportion_ci(method="wilson")
    ci = binomtest(k, n).proportion_ci(0.95, method="wilson")
    assert wilson_half_width(k / n, n) == pytest.approx((ci.high - ci.low) / 2, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("half", [0.05, 0.1, 0.02])
def test_drops_to_estimate_at_one_half_is_the_closed_form(half):
    # Wilson (1927): at p = 1/2 the half-width is z / (2 sqrt(n + z^2)), so
    # n = ceil((z / 2h)^2 - z^2): 381 for +-5 points at 95 % (by hand)
    expected = math.ceil((Z / (2 * half)) ** 2 - Z ** 2)
    assert drops_to_estimate(0.5, half) == expected
    if half == 0.05:
        assert expected == 381


@pytest.mark.parametrize("p", [0.9, 0.2, 0.97])
def test_drops_to_estimate_is_the_smallest_that_reaches_the_width(p):
    # the interval at n drops is within +-5 points and at n - 1 it is not
    # (scipy's Wilson interval at the nearest whole count agrees within a
    # thousandth: a count is whole, p n is not)
    n = drops_to_estimate(p)
    assert wilson_half_width(p, n) <= 0.05 < wilson_half_width(p, n - 1)
    k = round(p * n)
    ci = binomtest(k, n).proportion_ci(0.95, method="wilson")
    assert (ci.high - ci.low) / 2 == pytest.approx(0.05, abs=2e-3)


def test_drops_to_tell_apart_matches_fleiss():
    # Fleiss, Statistical Methods for Rates and Proportions (1981), section
    # 3.2, table A.3 as recalled (from memory): p 0.4 vs 0.6, alpha 0.05
    # two-sided, power 0.8: 97 per group by the plain formula, 107 with
    # the continuity correction; 0.05 vs 0.10: 435 and 474. Each is also
    # by hand: n' = (1.96 sqrt(2 x 0.5 x 0.5) + 0.8416 sqrt(0.24 + 0.24))^2 / 0.2^2 = 96.9
    assert drops_to_tell_apart(0.6, 0.4, continuity=False) == 97
    assert drops_to_tell_apart(0.6, 0.4) == 107
    assert drops_to_tell_apart(0.05, 0.10, continuity=False) == 435
    assert drops_to_tell_apart(0.05, 0.10) == 474
    assert drops_to_tell_apart(0.4, 0.6) == drops_to_tell_apart(0.6, 0.4)
    assert drops_to_tell_apart(0.5, 0.5) == math.inf


# --- camera --------------------------------------------------------------

def test_camera_arithmetic_by_hand():
    # a 100 mm field on 1000 px: 0.1 mm pixels; at 2 m/s a point crosses one in 50 us
    assert longest_exposure(0.1, 1000, 2.0) == pytest.approx(50e-6, rel=1e-12)
    # 5 frames in a 50 us contact: 100,000 frames/s; 10 in a 20 ms flight: 500
    assert frames_rate(50e-6, 5) == pytest.approx(1e5, rel=1e-12)
    assert frames_rate(0.02, 10) == pytest.approx(500, rel=1e-12)
    assert np.isnan(frames_rate(np.nan, 5)) and np.isnan(frames_rate(0.0, 5))
    # capsule: half of the 14 mm cylinder plus the 3.5 mm cap radius
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200)
    assert float(body_reach(capsule.profile)) == pytest.approx(0.0105, rel=1e-12)


def _flat_capsule_drop(**release):
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200)
    return sim.simulate(capsule, sim.Release(height=0.1, angle=0.0, **release), sim.Contact(0.5, 0.3),
                        impacts=3)


def test_fastest_point_and_extent_of_a_flat_drop_by_hand():
    # lying flat from a centre height of 100 mm: the lowest point falls
    # 100 - 3.5 mm, v = sqrt(2 g h) = 1.376 m/s before the first impact,
    # no spin (symmetric); the body sweeps its own length (21 mm) and its
    # top point starts highest (103.5 mm)
    result = _flat_capsule_drop()
    assert fastest_point_speed(result)[0] == pytest.approx(math.sqrt(2 * sim.GRAVITY * 0.0965), rel=1e-9)
    width, height = drop_extent(result)
    assert width[0] == pytest.approx(0.021, rel=1e-9)
    assert height[0] == pytest.approx(0.1035, rel=1e-9)


def test_camera_rate_is_the_larger_rule_and_sets_the_window():
    result = _flat_capsule_drop(spin=0.0)
    cam = camera_rate(result, 60e-6, 0.010)
    assert cam.contact_rate == pytest.approx(5 / 60e-6, rel=1e-12)
    flights = result.flight[np.isfinite(result.flight) & (result.flight >= 0.010)]
    assert cam.flight_rate == pytest.approx(10 / flights.min(), rel=1e-12)
    assert cam.rate == pytest.approx(max(cam.contact_rate, cam.flight_rate), rel=1e-12)
    assert cam.window == pytest.approx(1 / cam.rate, rel=1e-12)


# --- release tolerance -----------------------------------------------------

def test_bisection_brackets_a_known_crossing():
    # p(x) = 1 - x / 10 crosses 0.75 at x = 2.5 (by hand)
    found = largest_tolerance(lambda x: 1 - x / 10, 0.75, "angle", 10.0)
    assert found.low <= 2.5 < found.high
    assert found.high - found.low == pytest.approx(10.0 / 2 ** STEPS, rel=1e-12)
    assert largest_tolerance(lambda x: 0.5, 0.75, "angle", 10.0).low == 0.0        # missed even exactly
    assert np.isnan(largest_tolerance(lambda x: 0.9, 0.75, "angle", 10.0).high)    # met over the whole range


@pytest.mark.slow
def test_tolerance_search_brackets_the_target_on_the_study():
    # quick at a good pick (aspect ratio 5.8, angle 49.5 deg): the angle
    # tolerance that keeps the event in 80 % of drops. On the search's own
    # sample (common random numbers) the bracket is exact; on a fresh
    # sample (another seed) the probability at the found tolerance is the
    # target within Monte Carlo noise: 3 standard errors sqrt(t (1 - t) / n)
    # = 3 x 0.013 at n = 1000 (a 0.3 % chance of a false alarm per side)
    study = at_condition(load_study(QUICK), {"angle": 49.5, "aspect_ratio": 5.8})
    goal = GoalAt(study, 1000)
    target = 0.8
    found = largest_tolerance(lambda x: goal.probability(angle=x), target, "angle", 45.0)
    assert 0 < found.low < found.high < 45
    assert goal.probability(angle=found.low) >= target > goal.probability(angle=found.high)
    fresh = GoalAt(study.model_copy(update={"run": study.run.model_copy(update={"seed": 12345})}), 1000)
    noise = 3 * math.sqrt(target * (1 - target) / 1000)
    assert fresh.probability(angle=found.low) >= target - noise
    assert fresh.probability(angle=found.high * 1.5) < target + noise


# --- outputs ----------------------------------------------------------------

def test_safety_text_is_one_and_shared():
    from hopscape import cli, report
    assert cli.SAFETY is SAFETY and report.SAFETY is SAFETY
    plan = RigPlan("given: angle 30 deg")
    plan.add("camera", "shortest contact", 60.0, "us")
    assert plan_text([plan]).endswith(SAFETY)
    assert "hopscape plan STUDY" in section_html(Path("/nonexistent"))


def test_report_section_is_replaced_not_repeated(tmp_path):
    page = tmp_path / "report.html"
    page.write_text("<html><body><h1>x</h1>\n" + section_html(tmp_path) + "\n<p>end</p></body></html>")
    plan = RigPlan("pick 1: angle 30 deg")
    plan.add("camera", "camera frame rate", 83000.0, "1/s", "the larger of the two")
    plan.table().to_csv(tmp_path / PLAN_FILE, index=False)
    update_report(tmp_path)
    update_report(tmp_path)
    text = page.read_text()
    assert text.count("<h2 id=rig-plan>") == 1 and "83,000" in text and "No rig plan yet" not in text
    assert text.index("<h1>x</h1>") < text.index("Rig plan") < text.index("<p>end</p>")


# --- the command ------------------------------------------------------------

@pytest.mark.parametrize("extra, words", [
    (["--at", "angle=30"], ["--at", "aspect_ratio", "swept"]),
    (["--at", "angel=30,aspect_ratio=4"], ["unknown quantity", "'angel'", "angle"]),
    (["--at", "angle=500,aspect_ratio=4"], ["angle", "[-360, 360]", "500"]),
    (["--at", "angle=thirty,aspect_ratio=4"], ["angle", "number", "thirty"]),
    (["--at", "angle=30,aspect_ratio=4", "--sensor-pixels", "0"], ["--sensor-pixels", "0"]),
    (["--at", "angle=30,aspect_ratio=4", "--target", "1.5"], ["--target", "1.5"]),
    (["--at", "angle=30,aspect_ratio=4", "--fov-width", "-1"], ["--fov-width", "-1"]),
    (["--at", "angle=30,aspect_ratio=4", "--body-material", "cheese"], ["--body-material", "steel", "'cheese'"]),
    (["--at", "angle=30,aspect_ratio=4", "--body-material", "nylon"], ["floor_material", "missing"]),
    (["--pick", "3"], ["picks.csv", "hopscape run quick", "--at"]),
    # legal (an angle of many turns) but outside the study's sweep: a warning, refused under --strict
    (["--at", "angle=300,aspect_ratio=4", "--strict"], ["--at angle=300", "swept 0-90 deg"]),
])
def test_bad_input_is_one_line_and_exit_2(tmp_path, capsys, extra, words):
    code = main(["plan", str(QUICK), "--run", str(tmp_path / "none"), "--out", str(tmp_path / "out"), *extra])
    err = capsys.readouterr().err
    assert code == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("hopscape: error:"), err
    for word in words:
        assert word in lines[0], (word, lines[0])
    assert not (tmp_path / "out" / PLAN_FILE).exists()


@pytest.mark.slow
def test_plan_on_quick_gives_finite_plausible_numbers(tmp_path, capsys):
    code = main(["plan", str(QUICK), "--at", "angle=49.5,aspect_ratio=5.8", "--drops", "400", "--target", "0.8",
                 "--body-material", "nylon", "--floor-material", "steel", "--out", str(tmp_path)])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert SAFETY in out and "Rig plan, given: angle 49.5 deg, aspect ratio 5.8" in out
    plan = pd.read_csv(tmp_path / PLAN_FILE).set_index("item")["value"]
    # Hertz contact of a 6 mm polymer pin on steel below 1 m/s: tens of
    # microseconds (Johnson's t_c ~ (m^2 / (R E*^2 v))^(1/5); docs/physics.md section 9)
    assert 20 < plan["shortest contact"] < 300
    assert plan["camera frame rate"] == pytest.approx(max(plan["frame rate to resolve the contact"],
                                                          plan["frame rate to measure the rebound"]), rel=1e-9)
    assert plan["bounce-grouping window (one frame)"] == pytest.approx(1e6 / plan["camera frame rate"], rel=1e-9)
    # falls of 3-8 mm plus the tolerance: under 1.5 m/s at any point; the
    # exposure is the pixel over that speed (by hand)
    assert 0.2 < plan["fastest speed of any point"] < 1.5
    assert plan["longest exposure (blur under 1 px)"] == pytest.approx(
        plan["pixel size in the object plane"] * 1e-3 / plan["fastest speed of any point"] * 1e6, rel=1e-9)
    assert plan["field of view needed: width"] > 6 * 5.8   # at least the pin's own length [mm]
    assert 0 < plan["largest angle tolerance alone (+-)"] <= 45
    assert plan["drops for +-5 points at any probability"] == 381
    assert 0 < plan["largest peak force"] < 100
    assert (tmp_path / "rig-plan.png").is_file()


@pytest.mark.slow
def test_plan_fills_the_run_reports_section(small_run, tmp_path, capsys):
    # a copy of the shared run: the plan writes into its run folder
    import shutil
    run = tmp_path / "run"
    shutil.copytree(small_run, run)
    page = run / "report.html"
    assert "No rig plan yet" in page.read_text()
    code = main(["plan", str(small_run.parent / "small.yaml"), "--run", str(run), "--drops", "200"])
    out, err = capsys.readouterr()
    assert code == 0, err
    text = page.read_text()
    assert "No rig plan yet" not in text and text.count("<h2 id=rig-plan>") == 1
    assert 'src="rig-plan.png"' in text and (run / "rig-plan.png").is_file()
    # no materials in this study: no contact numbers, said so; the rest is there
    plan = pd.read_csv(run / PLAN_FILE).set_index("item")["value"]
    assert np.isnan(plan["shortest contact"]) and "no materials" in out
    assert plan["camera frame rate"] > 0 and plan["drops for +-5 points at any probability"] == 381
    picks = pd.read_csv(run / "picks.csv")
    assert f"pick 1: aspect ratio {picks['aspect_ratio'][0]:.4g}" in out


def test_a_field_of_view_in_millimetres_is_warned_and_strict_refuses_it(tmp_path, capsys):
    # 50 "m" of field: legal, but surely millimetres; --strict makes it bad input
    code = main(["plan", str(QUICK), "--at", "angle=30,aspect_ratio=4", "--fov-width", "50", "--strict",
                 "--out", str(tmp_path)])
    err = capsys.readouterr().err
    assert code == 2 and "--fov-width 50 m" in err and "(--strict)" in err
    assert not (tmp_path / PLAN_FILE).exists()


@pytest.mark.parametrize("pick", ["9", "x", "1,0"])
def test_a_pick_the_run_does_not_have_is_bad_input(tmp_path, capsys, pick):
    run = tmp_path / "run"
    run.mkdir()
    pd.DataFrame({"rank": [1, 2], "aspect_ratio": [5.8, 5.8], "angle_deg": [49.5, 51.0],
                  "goal_probability": [0.9, 0.8]}).to_csv(run / "picks.csv", index=False)
    code = main(["plan", str(QUICK), "--run", str(run), "--pick", pick])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1
    assert "--pick must be ranks of the run's picks (1-2) or all" in err and repr(pick.split(",")[-1]) in err


@pytest.mark.slow
def test_plan_on_a_handling_line_study_gives_finite_plausible_numbers(tmp_path, capsys):
    # pill-lip: size-0 class capsules (7.6 mm across) 30-60 mm onto a 10 deg chute
    study = QUICK.parent / "pill-lip.yaml"
    code = main(["plan", str(study), "--at", "angle=15,floor_angle=10", "--drops", "300",
                 "--body-material", "hard_gelatin", "--floor-material", "stainless_steel", "--out", str(tmp_path)])
    out, err = capsys.readouterr()
    assert code == 0, err
    plan = pd.read_csv(tmp_path / PLAN_FILE).set_index("item")["value"]
    assert np.isfinite(plan.drop(["drops per condition to tell them apart"], errors="ignore")).all()
    # Hertz contact of a gelatin shell on steel at ~1 m/s: tens of microseconds (docs/physics.md section 9)
    assert 10 < plan["shortest contact"] < 300
    # a fall of at most 60 mm plus 5 mm of tolerance: sqrt(2 g 0.065) = 1.13 m/s at the centre; spin after
    # the impacts adds at the ends, but not more than doubles it
    assert 0.5 < plan["fastest speed of any point"] < 2 * 1.13 + 0.5
    assert plan["field of view needed: height"] > 30            # [mm] it starts 30-60 mm up
    assert plan["field of view needed: width"] > 21.6            # [mm] at least its own length
    assert 0 <= plan["largest angle tolerance alone (+-)"] <= 45


def test_a_plan_older_than_the_picks_is_marked_out_of_date(tmp_path):
    import os
    plan = RigPlan("pick 1: angle 30 deg")
    plan.add("camera", "camera frame rate", 83000.0, "1/s")
    plan.table().to_csv(tmp_path / PLAN_FILE, index=False)
    (tmp_path / "picks.csv").write_text("rank\n1\n")
    earlier = (tmp_path / PLAN_FILE).stat().st_mtime - 10
    os.utime(tmp_path / "picks.csv", (earlier, earlier))   # the run, then the plan
    assert "Out of date" not in section_html(tmp_path)
    later = (tmp_path / PLAN_FILE).stat().st_mtime + 10
    os.utime(tmp_path / "picks.csv", (later, later))   # a newer run
    assert "Out of date" in section_html(tmp_path)


def test_the_plan_simulates_with_the_studys_contact_model_and_materials():
    # The plan's drops (camera, field of view, forces) must be the study's:
    # its run.model and, near flat, its materials' E* (docs/physics.md
    # section 7.1). Capsules released flat while sliding land on both ends
    # at once: the two-ends model resolves them with the study's pair, the
    # impulse model with one impulse under the middle.
    from conftest import PIN, grid, study_yaml
    from hopscape.metrics import drop_inputs
    from hopscape.plan import grid_frame
    from hopscape.rig.plan import simulate_condition
    from hopscape.sim.materials import effective_modulus, material
    from hopscape.study import parse_study

    def study(model, floor):
        return parse_study(study_yaml({
            "name": "slide", "body": {**PIN, "aspect_ratio": 3.0, "density": 1150, "material": "hard_gelatin"},
            "contact": {"restitution": 0.7, "friction": 0.3, "floor_material": floor},
            "release": {"height": 0.01, "angle": 0.0, "vx": grid(0.2, 1.0, 3)},
            "metric": {"kind": "ratio", "reference": "centre"},
            "analyses": {"draws": 2, "robustness": False}, "run": {"jobs": 1, "model": model}}))

    frame = grid_frame(study("two-ends", "steel"))
    on_steel = simulate_condition(study("two-ends", "steel"), frame)
    on_rubber = simulate_condition(study("two-ends", "rubber"), frame)
    rigid = simulate_condition(study("impulse", "steel"), frame)
    assert np.all(on_steel.end[:, 0] == 0)                    # both ends at once
    # the study's own E* reaches the kernel (not the default pair)
    gel, steel = material("hard_gelatin"), material("steel")
    rows, shape, release, contact = drop_inputs(study("two-ends", "steel"), frame)
    assert contact.contact_modulus == pytest.approx(
        effective_modulus(gel.youngs_modulus, gel.poisson, steel.youngs_modulus, steel.poisson))
    # a softer floor, another pair outcome; the impulse model spins the body
    # backwards under the middle, where both ends turn it forwards (the
    # defect of section 7.1)
    assert not np.allclose(on_steel.spin[:, 0], on_rubber.spin[:, 0])
    assert np.all(np.sign(rigid.spin[:, 0]) == -np.sign(on_steel.spin[:, 0]))
