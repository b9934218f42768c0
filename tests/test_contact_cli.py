"""The contact model at the user's edge: ``hopscape batch`` columns and
``hopscape drop`` options (materials, speed law, breakage screen), against
the physics functions they call and Hertz's closed forms (K. L. Johnson,
*Contact Mechanics*, CUP 1985, section 11.4; docs/physics.md section 9)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from hopscape import sim
from hopscape.batch_contract import OUTPUT_COLUMNS
from hopscape.cli import main
from hopscape.sim import hertz, materials
from hopscape.sim.flight import GRAVITY

CSV = """\
shape,length,radius,density,height,angle,restitution,friction,body_material,floor_material,body_modulus,body_poisson,speed_exponent,breakage_f_mat,breakage_w_min
sphere,0,0.005,7850,0.105,0,0.9999,0,steel,steel,,,,,
capsule,0.014,0.0035,1200,0.3,90,0.6,0.3,mcc_tablet,granite,1.5e9,,0.25,0.2,1
capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,,,,,,,
capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,glas,steel,,,,,
capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,steel,,,,,,
capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,,steel,2e9,0.7,,,
capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,steel,steel,,,,0.2,
"""


@pytest.fixture
def batch_out(tmp_path, capsys):
    source = tmp_path / "drops.csv"
    source.write_text(CSV)
    out = tmp_path / "out.csv"
    assert main(["batch", str(source), "--out", str(out), "--impacts", "2"]) == 0, capsys.readouterr().err
    return pd.read_csv(out)


def test_batch_contact_columns(batch_out):
    assert list(batch_out.columns) == list(OUTPUT_COLUMNS)
    first = batch_out[(batch_out["drop"] == 0) & (batch_out["impact"] == 1)].iloc[0]
    # steel ball R = 5 mm from 0.1 m onto steel: t_c = 32.9 us (docs/physics.md
    # section 9; Johnson's 2.868 (m^2 / (R E*^2 v))^(1/5))
    assert first["struck"] == "surface"
    assert first["contact_time"] * 1e6 == pytest.approx(32.9, abs=0.05)
    v = np.sqrt(2 * GRAVITY * 0.1)
    e_star = materials.effective_modulus(2e11, 0.3, 2e11, 0.3)
    mass = 7850 * 4 / 3 * np.pi * 0.005 ** 3
    depth = hertz.hertz_indentation(mass, v, e_star, 0.005)
    assert first["normal_speed"] == pytest.approx(v, rel=1e-9)
    assert first["indentation"] == pytest.approx(depth, rel=1e-4)  # e = 0.9999: a hair under the elastic value
    assert first["peak_force"] == pytest.approx(hertz.hertz_force(depth, e_star, 0.005), rel=1e-3)


def test_batch_modulus_overrides_material_and_speed_law_applies(batch_out):
    row = batch_out[(batch_out["drop"] == 1) & (batch_out["impact"] == 1)].iloc[0]
    # upright capsule, end on: e = 0.6 (v / 1 m/s)^(-1/4) (Bharadwaj et al. 2010)
    v = row["normal_speed"]
    assert row["restitution_used"] == pytest.approx(0.6 * v ** -0.25, rel=1e-12)
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200.0)
    granite = materials.material("granite")
    e_star = materials.effective_modulus(1.5e9, 0.3, granite.youngs_modulus, granite.poisson)
    # head on: m* = m, so the undamped scale is Johnson's with the capsule's mass
    scale = hertz.hertz_indentation(capsule.mass, v, e_star, 0.0035)
    assert row["indentation"] < scale  # damped: less than the elastic indentation
    assert row["indentation"] > 0.5 * scale
    # breakage screen: 1 - exp(-f x (W - W_min)), W = v^2 / 2 head on (Vogel & Peukert 2003)
    expected = 1 - np.exp(-0.2 * 0.007 * max(v ** 2 / 2 - 1.0, 0.0))
    assert row["breakage_probability"] == pytest.approx(expected, rel=1e-9)
    assert expected > 0


def test_batch_without_materials_leaves_contact_outputs_empty(batch_out):
    rows = batch_out[batch_out["drop"] == 2]
    assert len(rows) == 2 and rows["contact_time"].isna().all() and rows["normal_speed"].notna().all()
    assert (rows["struck"] == "cap").all()


@pytest.mark.parametrize("drop, words", [
    (3, ["body_material must be one of steel,", "mcc_tablet", "got 'glas'"]),
    (4, ["floor_material", "both sides"]),
    (5, ["body_poisson must be in [-1, 0.5], got 0.7"]),
    (6, ["breakage_f_mat and breakage_w_min", "both"]),
])
def test_batch_bad_contact_rows(batch_out, drop, words):
    error = batch_out.loc[batch_out["drop"] == drop, "error"].iloc[0]
    for word in words:
        assert word in error


@pytest.mark.slow  # draws four pictures (~1.5 s)
def test_drop_contact_table_and_force_picture(tmp_path, capsys):
    import matplotlib.image
    out = tmp_path / "pictures"
    code = main(["drop", "--shape", "sphere", "--radius", "0.005", "--density", "7850", "--height", "0.105",
                 "--angle", "0", "--restitution", "1", "--friction", "0", "--impacts", "2",
                 "--body-material", "steel", "--floor-material", "steel", "--out", str(out)])
    stdout = capsys.readouterr().out
    assert code == 0
    assert "Contact of each impact" in stdout
    contact = stdout[stdout.index("Contact of each impact"):]
    line = next(row for row in contact.splitlines() if row.strip().startswith("1 "))
    assert float(line.split()[5]) == pytest.approx(32.9, abs=0.1)  # duration [us], docs/physics.md section 9
    image = matplotlib.image.imread(out / "forces.png")
    assert image.shape[0] > 300 and image.std() > 0.05


def test_drop_without_materials_says_how_to_get_contact_outputs(capsys):
    assert main(["drop", "--no-plots", "--impacts", "1"]) == 0
    assert "give --body-material and --floor-material" in capsys.readouterr().out


@pytest.mark.parametrize("args, words", [
    (["--body-material", "glas", "--floor-material", "steel"], ["--body-material must be one of steel,", "'glas'"]),
    (["--body-modulus", "1e9", "--floor-material", "steel"], ["--body-poisson is missing"]),
    (["--speed-exponent", "2"], ["--speed-exponent: must be in [0, 1], got 2"]),
])
def test_drop_bad_contact_options(capsys, args, words):
    assert main(["drop", "--no-plots", *args]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    for word in words:
        assert word in err


def test_a_modulus_in_the_wrong_unit_is_warned_about(tmp_path, capsys):
    # 200 "Pa" is steel's 200 GPa typed without its unit: legal, but warned
    source = tmp_path / "drops.csv"
    source.write_text("shape,length,radius,density,height,angle,restitution,friction,body_modulus,body_poisson,"
                      "floor_material\ncapsule,0.014,0.0035,1200,0.3,30,0.8,0.3,200,0.3,steel\n")
    assert main(["batch", str(source), "--out", str(tmp_path / "out.csv")]) == 0
    err = capsys.readouterr().err
    assert "column body_modulus" in err and "is it in GPa or MPa?" in err
    assert main(["drop", "--no-plots", "--floor-modulus", "2e2", "--floor-poisson", "0.3", "--body-material",
                 "nylon", "--strict"]) == 2
    assert "--floor-modulus: 200 Pa is outside the usual" in capsys.readouterr().err


def test_api_drop_gives_the_commands_contact_columns(tmp_path, capsys):
    import hopscape
    path = tmp_path / "impacts.csv"
    options = ["--body-material", "acrylic", "--floor-material", "granite", "--speed-exponent", "0.25"]
    assert main(["drop", "--no-plots", "--csv", str(path), *options]) == 0
    capsys.readouterr()
    theirs = pd.read_csv(path)
    ours = hopscape.drop(body_material="acrylic", floor_material="granite", speed_exponent=0.25).impacts
    for column in ("struck", "normal_speed", "restitution_used", "contact_time", "peak_force", "indentation"):
        if not pd.api.types.is_numeric_dtype(ours[column]):
            assert ours[column].tolist() == theirs[column].tolist()
        else:  # the CSV keeps 17 significant digits
            assert ours[column].to_numpy() == pytest.approx(theirs[column].to_numpy(), rel=1e-12)
    assert np.isfinite(ours["contact_time"]).all()


def test_drop_help_shows_the_contact_options(capsys):
    # a '%' in a help text once broke argparse's help formatting
    assert main(["drop", "--help"]) == 0
    out = capsys.readouterr().out
    assert "--body-material" in out and "default 5% of the smaller" in out and "[-] p of restitution" in out


def test_restitution_table_option(tmp_path, capsys):
    # batch: one table for every row, replacing the restitution column
    source = tmp_path / "drops.csv"
    source.write_text("shape,radius,density,height,angle,restitution,friction\nsphere,0.005,1200,0.205,0,0.3,0\n")
    out = tmp_path / "out.csv"
    assert main(["batch", str(source), "--out", str(out), "--impacts", "1",
                 "--restitution-table", "0.5:0.9,1:0.8,3:0.6"]) == 0
    row = pd.read_csv(out).iloc[0]
    v = np.sqrt(2 * GRAVITY * 0.2)
    assert row["restitution_used"] == pytest.approx(np.interp(v, (0.5, 1, 3), (0.9, 0.8, 0.6)), rel=1e-9)
    assert row["vy"] == pytest.approx(row["restitution_used"] * v, rel=1e-9)  # a sphere head on (section 4)
    capsys.readouterr()
    assert main(["drop", "--no-plots", "--restitution-table", "1:0.8", "--impacts", "1"]) == 2
    assert "--restitution-table: must hold at least two" in capsys.readouterr().err
    assert main(["drop", "--no-plots", "--restitution-table", "1:0.8,2:0.7", "--speed-exponent", "0.2"]) == 2
    assert "not both" in capsys.readouterr().err


def test_sharp_rims_are_flagged_as_not_hertzian(tmp_path, capsys):
    source = tmp_path / "drops.csv"
    source.write_text("shape,length,radius,density,height,angle,restitution,friction,body_material,floor_material\n"
                      "cylinder,0.004,0.005,1200,0.3,40,0.8,0.3,acrylic,steel\n"
                      "capsule,0.014,0.0035,1200,0.3,40,0.8,0.3,acrylic,steel\n")
    assert main(["batch", str(source), "--out", str(tmp_path / "out.csv")]) == 0
    err = capsys.readouterr().err
    assert "1 row(s) (first: drop 0): a flat-ended cylinder's rim is a sharp edge, not a Hertzian contact" in err
    table = pd.read_csv(tmp_path / "out.csv")
    assert (table.loc[table["drop"] == 0, "struck"] == "rim").any()


def test_the_floor_is_screened_for_cracks_as_well_as_the_body(capsys):
    # both solids carry the same pressure p0; each is stretched at the edge
    # of the contact circle by (1 - 2 nu) p0 / 3 with its own nu (Johnson,
    # Contact Mechanics 1985, section 4.2; as recalled): a steel part on a
    # glass plate (nu 0.22, strength figure 45 MPa in the materials table)
    # can crack the plate, and steel has no strength figure of its own
    from hopscape.contact_report import strength_cautions
    from hopscape.sim.materials import material
    glass = material("soda_lime_glass")
    p0 = 2.0e9
    lines = strength_cautions([p0, np.nan], [("body", None, "", 0.3),
                                             ("floor", glass.strength, glass.strength_kind, glass.poisson)])
    assert len(lines) == 1 and "in the floor" in lines[0]
    assert f"{(1 - 2 * 0.22) * p0 / 3 / 1e6:.1f} MPa" in lines[0]
    # below the figure: no caution
    assert strength_cautions([0.5 * 3 * glass.strength / (1 - 2 * glass.poisson)],
                             [("floor", glass.strength, "", glass.poisson)]) == []
    assert main(["drop", "--body-material", "steel", "--floor-material", "soda_lime_glass", "--no-plots"]) == 0
    out = capsys.readouterr().out
    assert "tensile stress at the contact edge in the floor" in out and "in the body" not in out
