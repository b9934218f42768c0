"""The contact model in studies: materials in the body and contact
sections, the speed law as a study quantity, the metric kinds peak_force
and breakage (docs/physics.md section 9), checked against Hertz's closed
forms (K. L. Johnson, *Contact Mechanics*, CUP 1985, section 11.4) and
the Vogel & Peukert master curve (Powder Technol. 129:101, 2003)."""
from __future__ import annotations

import numpy as np
import pytest

from conftest import grid, run_text, study_yaml
from hopscape import sim
from hopscape.errors import InputError
from hopscape.sim import hertz, materials
from hopscape.sim.flight import GRAVITY
from hopscape.study import parse_study

RADIUS, DENSITY = 0.005, 7850.0
MASS = DENSITY * 4 / 3 * np.pi * RADIUS ** 3
E_STEEL = materials.effective_modulus(2e11, 0.3, 2e11, 0.3)

#: steel balls dropped on steel from three heights (lowest point)
BALLS = {
    "name": "balls",
    "body": {"shape": "sphere", "diameter": 2 * RADIUS, "density": DENSITY, "material": "steel"},
    "contact": {"restitution": 0.9999, "friction": 0.0, "floor_material": "steel"},
    "release": {"height": grid(0.05, 0.2, 3), "height_of": "bottom", "angle": 0},
    "metric": {"kind": "peak_force", "reference": "centre", "force_limit": 800, "goal": "avoid"},
    "analyses": {"draws": 1, "robustness": False},
    "run": {"impacts": 2},  # the first impact is the hardest: e ~ 1, speed v then 0.9999 v
}


def _grid_table(sections, tmp_path):
    outcome = run_text(study_yaml(sections), tmp_path / "run")
    return outcome.tables["grid"].sort_values("height_m").reset_index(drop=True)


def test_peak_force_metric_is_johnsons_force(tmp_path):
    table = _grid_table(BALLS, tmp_path)
    v = np.sqrt(2 * GRAVITY * np.array([0.05, 0.125, 0.2]))
    # undamped Hertz (e = 0.9999): F = (4/3) E* sqrt(R) delta_max^1.5, 1e-3:
    # the hair of damping (it lowers the peak by about 1e-4)
    expected = hertz.hertz_force(hertz.hertz_indentation(MASS, v, E_STEEL, RADIUS), E_STEEL, RADIUS)
    assert table["value"].to_numpy() == pytest.approx(expected, rel=1e-3)
    assert table["peak_force_N"].to_numpy() == pytest.approx(expected, rel=1e-3)
    assert table["contact_time_s"].to_numpy() == pytest.approx(hertz.hertz_duration(MASS, v, E_STEEL, RADIUS),
                                                              rel=2e-4)
    assert table["event"].tolist() == list(expected > 800)


def test_breakage_metric_is_the_master_curve_over_the_impacts(tmp_path):
    # a sphere bouncing head on: impact speeds v, e v, e^2 v; each impact
    # S_i = 1 - exp(-f x (v_i^2 / 2 - W_min)) and the drop 1 - prod(1 - S_i)
    f_mat, w_min, e = 2.0, 0.2, 0.6
    sections = {**BALLS, "body": {**BALLS["body"], "breakage_f_mat": f_mat, "breakage_w_min": w_min},
                "contact": {**BALLS["contact"], "restitution": e},
                "metric": {"kind": "breakage", "reference": "centre", "threshold": 0.05, "goal": "avoid"},
                "run": {"impacts": 3}}
    table = _grid_table(sections, tmp_path)
    v = np.sqrt(2 * GRAVITY * np.array([0.05, 0.125, 0.2]))[:, None] * e ** np.arange(3)
    survive = np.exp(-f_mat * 2 * RADIUS * np.maximum(v ** 2 / 2 - w_min, 0.0)).prod(axis=1)
    assert table["value"].to_numpy() == pytest.approx(1 - survive, rel=1e-6)
    assert table["breakage_probability"].to_numpy() == pytest.approx(1 - survive, rel=1e-6)


def test_speed_exponent_is_a_study_quantity(tmp_path):
    # Bharadwaj, Smith & Hancock 2010: e = e_ref (v / v_ref)^(-p); a sphere's
    # first rebound height is e^2 times its drop
    sections = {**BALLS, "contact": {"restitution": 0.8, "friction": 0.0, "speed_exponent": grid(0.0, 0.5, 3),
                                     "reference_speed": 0.5},
                "body": {k: v for k, v in BALLS["body"].items() if k != "material"},
                "release": {"height": 0.2, "height_of": "bottom", "angle": 0},
                "metric": {"kind": "ratio", "bounce": "first", "reference": "bottom"}}
    sections["contact"].pop("floor_material", None)
    table = _grid_table(sections, tmp_path).sort_values("speed_exponent")
    v = np.sqrt(2 * GRAVITY * 0.2)
    e = np.minimum(0.8 * (v / 0.5) ** -np.array([0.0, 0.25, 0.5]), 1.0)
    assert table["ratio_1"].to_numpy() == pytest.approx(e ** 2, rel=1e-9)
    assert "peak_force_N" not in table  # no materials: no contact columns


@pytest.mark.parametrize("change, words", [
    ({"metric": {"kind": "peak_force", "reference": "centre", "force_limit": 10},
      "body": {"shape": "sphere", "diameter": 0.01}, "contact": {"restitution": 0.8, "friction": 0.1}},
     ["metric.kind", "needs the contact model's materials"]),
    ({"metric": {"kind": "peak_force", "reference": "centre"}}, ["metric.force_limit", "needs force_limit"]),
    ({"metric": {"kind": "breakage", "reference": "centre", "threshold": 0.1}}, ["needs body.breakage_f_mat"]),
    ({"metric": {"kind": "breakage", "reference": "centre"}}, ["metric.threshold", "below 1", "got 1"]),
    ({"contact": {**BALLS["contact"], "floor_material": "stel"}},
     ["contact.floor_material", "'steel', 'stainless_steel'", "'stel'"]),
    ({"body": {**BALLS["body"], "poisson": 0.6}}, ["body.poisson", "0.5"]),
    ({"contact": {"restitution": 0.8, "friction": 0.0}}, ["floor_material (or its modulus and poisson) is missing"]),
    ({"contact": {**BALLS["contact"], "speed_exponent": 2}}, ["contact.speed_exponent", "[0, 1]"]),
])
def test_study_contact_mistakes(change, words):
    with pytest.raises(InputError) as caught:
        parse_study(study_yaml({**BALLS, **change}))
    text = "\n".join(caught.value.messages)
    for word in words:
        assert word in text


def test_report_lists_the_contact_settings():
    from hopscape.report import contact_rows
    study = parse_study(study_yaml({**BALLS, "contact": {**BALLS["contact"], "speed_exponent": 0.25}}))
    rows = {name: value for name, _, value in contact_rows(study)}
    model = rows.pop("contact model")
    assert rows == {"body material": "steel", "floor material": "steel", "reference speed": "1 m/s"}
    # the study table names the model used, the default unless the study names one
    assert model.startswith("two-ends: ") and sim.MODEL_WORDS["two-ends"] in model
    assert set(sim.MODEL_WORDS) == set(sim.MODELS)


def test_restitution_table_in_a_study(tmp_path):
    # measured pairs replace the restitution: a sphere's first rebound
    # height is e(v)^2 times its drop, e read linearly from the table
    sections = {**BALLS, "contact": {"restitution": 0.5, "friction": 0.0,
                                     "restitution_table": [[0.5, 0.9], [1, 0.8], [3, 0.6]]},
                "body": {k: v for k, v in BALLS["body"].items() if k != "material"},
                "release": {"height": grid(0.02, 0.2, 2), "height_of": "bottom", "angle": 0},
                "metric": {"kind": "ratio", "bounce": "first", "reference": "bottom"}}
    table = _grid_table(sections, tmp_path)
    v = np.sqrt(2 * GRAVITY * np.array([0.02, 0.2]))
    assert table["ratio_1"].to_numpy() == pytest.approx(np.interp(v, (0.5, 1, 3), (0.9, 0.8, 0.6)) ** 2, rel=1e-9)
    with pytest.raises(InputError, match="give restitution_table or speed_exponent, not both"):
        parse_study(study_yaml({**sections, "contact": {**sections["contact"], "speed_exponent": 0.25}}))
    with pytest.raises(InputError, match="speeds must rise"):
        parse_study(study_yaml({**sections, "contact": {**sections["contact"],
                                                        "restitution_table": [[1, 0.8], [0.5, 0.9]]}}))


def test_a_sharp_rim_in_a_study_is_warned_about():
    rod = {**BALLS, "body": {"shape": "cylinder", "diameter": 0.006, "length": 0.02, "material": "acrylic"}}
    warnings = parse_study(study_yaml(rod)).warnings
    assert any("body.shape: a flat-ended cylinder's rim is a sharp edge, not a Hertzian contact" in w
               for w in warnings)
    assert not any("sharp edge" in w for w in parse_study(study_yaml(BALLS)).warnings)


def test_a_study_without_contact_settings_keeps_its_fingerprint():
    # the numbers hashed for a study that names no material or speed law
    # are those it had before the contact model existed: its runs resume
    from hopscape.study import load_study
    from pathlib import Path
    study = load_study(Path(__file__).resolve().parents[1] / "studies" / "quick.yaml")
    numbers = study.numbers()
    # (checked by hand: every example study's fingerprint is the one the
    # code before the contact model gave, e.g. quick.yaml ba2c4368398cc287)
    for section, names in (("body", ("material", "modulus", "poisson", "rim_edge_radius", "breakage_f_mat",
                                     "breakage_w_min")),
                           ("contact", ("speed_exponent", "reference_speed", "restitution_table", "floor_material",
                                        "floor_modulus", "floor_poisson")), ("metric", ("force_limit",))):
        assert not set(names) & set(numbers[section]), section
    given = parse_study(study_yaml({**BALLS, "contact": {**BALLS["contact"], "speed_exponent": 0.25}})).numbers()
    assert given["body"]["material"] == "steel" and given["contact"]["reference_speed"] == 1.0
