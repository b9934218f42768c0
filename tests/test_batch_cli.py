"""``hopscape batch``, ``hopscape drop`` and ``hopscape bench`` from the outside.

Batch: bad rows are reported in the ``error`` column and never stop the
batch; good rows are exactly what ``sim.simulate`` gives for that drop on
its own. Drop: bad arguments are one line on stderr with exit code 2.
"""
import json
import math
import subprocess

import matplotlib.image
import numpy as np
import pandas as pd
import pytest

from hopscape import sim
from conftest import hopscape_command
from hopscape.cli import main

REQUIRED = ["drop", "impact", "time", "angle", "vx", "vy", "spin", "impulse_normal", "impulse_tangential",
            "energy_before", "energy_after", "peak_centre", "peak_bottom"]

DROPS_CSV = """\
shape,length,radius,density,height,angle,spin,vx,restitution,friction
capsule,0.014,0.0035,1200,0.05,30,0,0,0.8,0.3
capsule,0.014,0.0035,1200,0.05,30,0,0,1.5,0.3
sphere,0,-0.002,1200,0.05,0,0,0,0.8,0.3
cube,0.01,0.0035,1200,0.05,30,0,0,0.8,0.3
capsule,0.014,0.0035,1200,0.05,nan,0,0,0.8,0.3
capsule,0.014,0.0035,1200,0.004,30,0,0,0.8,0.3
spheroid,0.02,0.004,1100,0.08,60,5,0.1,0.7,0.2
cylinder,0.004,0.005,1500,0.03,10,-3,0,0.6,0.4
sphere,0,0.003,7800,0.1,0,20,-0.2,0.9,0.1
"""
GOOD = [0, 6, 7, 8]
BAD = {  # row -> words its error must contain
    1: ["restitution", "[0, 1]", "1.5"],
    2: ["radius", "> 0", "-0.002"],
    3: ["shape", "capsule, sphere, spheroid", "'cube'"],
    4: ["angle", "finite"],
    # capsule at 30 deg: lowest point 7 mm x sin 30 + 3.5 mm = 7 mm below
    # the centre, which is released at 4 mm
    5: ["height 0.004", "inside the floor", "-0.003"],
}
IMPACTS = 3


def batch(tmp_path, capsys, source, out_name):
    out = tmp_path / out_name
    code = main(["batch", str(source), "--out", str(out), "--impacts", str(IMPACTS)])
    stdout, stderr = capsys.readouterr()
    assert code == 0, stderr
    assert stderr == ""
    return out, stdout


def read(path):
    return pd.read_parquet(path) if path.suffix == ".parquet" else pd.read_csv(path, keep_default_na=True)


@pytest.fixture
def csv_input(tmp_path):
    path = tmp_path / "drops.csv"
    path.write_text(DROPS_CSV, encoding="utf-8")
    return path


def direct(row):
    """The drop of one input row, simulated on its own."""
    shape = sim.make_shape(row["shape"], length=row["length"], radius=row["radius"], density=row["density"])
    release = sim.Release(height=row["height"], angle=math.radians(row["angle"]), spin=row["spin"], vx=row["vx"])
    contact = sim.Contact(row["restitution"], row["friction"], "energetic")
    return sim.simulate(shape, release, contact, impacts=IMPACTS)


def test_batch_has_every_column_and_reports_bad_rows(tmp_path, capsys, csv_input):
    out, stdout = batch(tmp_path, capsys, csv_input, "out.csv")
    table = read(out)
    assert set(REQUIRED) <= set(table.columns)
    assert "error" in table.columns
    assert "9 drops" in stdout and "5 row(s) could not be simulated" in stdout
    errors = table["error"].fillna("")
    # every input row is in the output: good rows with their impacts,
    # bad rows once, with no impact and a reason
    assert sorted(table["drop"].unique()) == list(range(9))
    for row, words in BAD.items():
        rows = table[table["drop"] == row]
        assert len(rows) == 1, row
        assert rows["impact"].isna().all()
        for word in words:
            assert word in rows["error"].iloc[0], (row, rows["error"].iloc[0])
    for row in GOOD:
        rows = table[table["drop"] == row]
        assert (errors[rows.index] == "").all()
        assert list(rows["impact"]) == list(range(1, IMPACTS + 1))   # these drops all reach 3 impacts
        assert rows[REQUIRED].notna().all().all()


@pytest.mark.parametrize("out_name", ["out.parquet", "out.csv"])
def test_good_rows_match_sim_simulate(tmp_path, capsys, csv_input, out_name):
    out, _ = batch(tmp_path, capsys, csv_input, out_name)
    table = read(out)
    inputs = pd.read_csv(csv_input)
    for row in GOOD:
        result = direct(inputs.iloc[row])
        got = table[table["drop"] == row].sort_values("impact")
        n = int(result.count[0])
        assert len(got) == n == IMPACTS
        expected = {
            "time": result.time[0, :n],
            "angle": (np.degrees(result.theta[0, :n]) + 180.0) % 360.0 - 180.0,
            "vx": result.vx[0, :n], "vy": result.vy[0, :n], "spin": result.spin[0, :n],
            "impulse_normal": result.impulse_normal[0, :n],
            "impulse_tangential": result.impulse_tangential[0, :n],
            "peak_centre": result.peak_centre[0, :n], "peak_bottom": result.peak_bottom[0, :n],
        }
        # The simulation of a row does not depend on the other rows of its
        # chunk (sim.drop), and both file formats store doubles exactly
        # (Parquet natively, pandas writes CSV floats with round-trip
        # precision), so 1e-13 only allows last-bit differences.
        for col, values in expected.items():
            np.testing.assert_allclose(got[col].to_numpy(float), values, rtol=1e-13, atol=1e-300, err_msg=col)


def test_energies_obey_flight_and_impact_physics(tmp_path, capsys, csv_input):
    # Independent of the kernel's bookkeeping: a free flight conserves
    # mechanical energy (exact parabola and constant spin), so the energy
    # before impact 1 is the release energy and before impact k+1 it is the
    # energy after impact k; the energetic law never adds energy (Stronge,
    # J. Appl. Mech. 58:1049, 1991).
    out, _ = batch(tmp_path, capsys, csv_input, "out.parquet")
    table = read(out)
    inputs = pd.read_csv(csv_input)
    for row in GOOD:
        r = inputs.iloc[row]
        shape = sim.make_shape(r["shape"], length=r["length"], radius=r["radius"], density=r["density"])
        mass, inertia = float(np.ravel(shape.mass)[0]), float(np.ravel(shape.inertia)[0])
        release = mass * sim.GRAVITY * r["height"] + 0.5 * mass * r["vx"] ** 2 + 0.5 * inertia * r["spin"] ** 2
        got = table[table["drop"] == row].sort_values("impact")
        before, after = got["energy_before"].to_numpy(float), got["energy_after"].to_numpy(float)
        # 1e-9: the contact time is a polished root, not exact
        np.testing.assert_allclose(before[0], release, rtol=1e-9)
        np.testing.assert_allclose(before[1:], after[:-1], rtol=1e-9)
        assert np.all(after <= before * (1 + 1e-12))
        assert np.all(after < before)            # restitution below 1 here: strictly less


def test_nan_error_message_reads_like_the_input(tmp_path, capsys, csv_input):
    out, _ = batch(tmp_path, capsys, csv_input, "out.csv")
    table = read(out)
    message = table.loc[table["drop"] == 4, "error"].iloc[0]
    assert "np.float64" not in message


def test_parquet_input_and_output(tmp_path, capsys, csv_input):
    frame = pd.read_csv(csv_input)
    assert np.isnan(frame.loc[4, "angle"])
    pq_in = tmp_path / "drops.parquet"
    frame.to_parquet(pq_in, index=False)
    pq_out, stdout = batch(tmp_path, capsys, pq_in, "from-parquet.parquet")
    assert pq_out.read_bytes()[:4] == b"PAR1"
    csv_out, _ = batch(tmp_path, capsys, csv_input, "from-csv.csv")
    assert csv_out.read_bytes()[:4] == b"drop"      # a text header, not Parquet
    a, b = read(pq_out), read(csv_out)
    assert list(a.columns) == list(b.columns)
    assert len(a) == len(b)
    np.testing.assert_array_equal(a["drop"], b["drop"])
    for col in REQUIRED[2:]:
        np.testing.assert_allclose(a[col].to_numpy(float), b[col].to_numpy(float), rtol=1e-13, equal_nan=True)
    np.testing.assert_array_equal(a["error"].fillna("").to_numpy(), b["error"].fillna("").to_numpy())


def test_batch_missing_column_is_bad_input(tmp_path, capsys):
    path = tmp_path / "drops.csv"
    path.write_text("shape,radius,density,height,angle,friction\ncapsule,0.003,1000,0.1,30,0.2\n")
    code = main(["batch", str(path), "--out", str(tmp_path / "out.csv")])
    _, err = capsys.readouterr()
    assert code == 2
    assert err.count("\n") == 1 and err.startswith("hopscape: error: ")
    assert "restitution" in err
    assert not (tmp_path / "out.csv").exists()


def test_batch_missing_input_file_is_bad_input(tmp_path, capsys):
    code = main(["batch", str(tmp_path / "none.csv"), "--out", str(tmp_path / "out.csv")])
    _, err = capsys.readouterr()
    assert code == 2
    assert err == f"hopscape: error: {tmp_path / 'none.csv'}: no such table file\n"


# --------------------------------------------------------------------------
# hopscape drop
# --------------------------------------------------------------------------

@pytest.mark.parametrize("args, words", [
    (["--radius", "-0.001"], ["radius", "> 0", "-0.001"]),
    (["--length", "-0.01"], ["length", ">= 0", "-0.01"]),
    (["--restitution", "1.5"], ["restitution", "[0, 1]", "1.5"]),
    (["--angle", "nan"], ["--angle", "finite", "got nan"]),
    (["--height", "inf"], ["--height", "finite", "got inf"]),
    # default capsule (L = 14 mm, R = 3.5 mm) at 30 deg: lowest point 7 mm
    # below the centre, released at 1 mm -> -6 mm
    (["--height", "0.001"], ["inside the floor", "-0.006"]),
    (["--floor-angle", "75"], ["--floor-angle", "[-60, 60] deg", "75"]),
])
def test_drop_bad_arguments(tmp_path, capsys, args, words):
    code = main(["drop", "--no-plots", "--out", str(tmp_path / "pics")] + args)
    out, err = capsys.readouterr()
    assert code == 2
    assert out == ""
    assert err.count("\n") == 1 and err.startswith("hopscape: error: ")
    assert "Traceback" not in err
    for word in words:
        assert word in err, err
    assert not (tmp_path / "pics").exists()


def test_drop_inside_floor_real_command_has_no_traceback():
    proc = subprocess.run(hopscape_command() + ["drop", "--no-plots", "--height", "0.001"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert len(proc.stderr.splitlines()) == 1
    assert proc.stderr.startswith("hopscape: error: ") and "Traceback" not in proc.stderr


def test_drop_writes_three_pictures(tmp_path, capsys):
    folder = tmp_path / "pics"
    code = main(["drop", "--out", str(folder), "--height", "0.05", "--impacts", "4"])
    out, err = capsys.readouterr()
    assert code == 0 and err == ""
    names = sorted(p.name for p in folder.iterdir())
    assert names == ["bounces.png", "energy.png", "strobe.png"]
    for name in names:
        image = matplotlib.image.imread(folder / name)
        assert image.shape[0] > 200 and image.shape[1] > 200
        assert image[..., :3].std() > 0.01                 # something is drawn
    assert "release height: centre 50.00 mm" in out
    assert "the drop ended after 4 impact(s): the impact limit (--impacts) was reached" in out
    assert "Safety:" in out


# --------------------------------------------------------------------------
# hopscape bench
# --------------------------------------------------------------------------

def test_bench_json(capsys):
    code = main(["bench", "--drops", "2000", "--repeat", "1", "--json"])
    out, err = capsys.readouterr()
    assert code == 0 and err == ""
    lines = out.strip().splitlines()
    assert len(lines) == 1
    result = json.loads(lines[0])
    assert isinstance(result, dict)
    assert result["drops"] == 2000 and result["jobs"] == 1
    assert result["drops_per_second"] > 0
    assert result["seconds"] > 0
    assert result["drops_per_second"] == pytest.approx(result["drops"] / result["seconds"], rel=1e-12)
    assert result["failed"] == 0


# --- the bounce-grouping window from the camera's frame rate ------------------

def test_camera_frame_rate_sets_which_impacts_make_one_bounce(tmp_path, capsys):
    # a 30 mm pin tipping from 20 mm: its impacts come 9.8 ms, 16 ms, 56 ms,
    # 47 ms and 4.9 ms apart. A 100 frames/s camera (10 ms per frame) sees
    # impacts 1-2 and 5-6 as one bounce each; at 100,000 frames/s every
    # impact is a bounce of its own.
    args = ["drop", "--shape", "capsule", "--radius", "0.003", "--length", "0.024", "--height", "0.02",
            "--angle", "20", "--restitution", "0.9", "--friction", "0.1", "--impacts", "6", "--no-plots"]
    bounces = {}
    for fps in (100, 100000):
        path = tmp_path / f"impacts-{fps}.csv"
        assert main(args + ["--fps", str(fps), "--csv", str(path)]) == 0
        bounces[fps] = pd.read_csv(path)["bounce"].tolist()
    assert bounces[100] == [1, 1, 2, 3, 4, 4]
    assert bounces[100000] == [1, 2, 3, 4, 5, 6]
    assert main(args + ["--fps", "100", "--merge-ms", "10"]) == 2
    assert "not allowed with argument --fps" in capsys.readouterr().err


def test_study_takes_the_camera_frame_rate_or_the_window_not_both():
    from hopscape.study import RunSettings
    assert RunSettings(camera_fps=500).merge_window == pytest.approx(0.002, rel=1e-15)
    assert RunSettings().merge_window == 0.010
    with pytest.raises(Exception, match="give camera_fps or merge_ms, not both"):
        RunSettings(camera_fps=500, merge_ms=5)


TILTED_CSV = """\
shape,length,radius,density,height,angle,spin,restitution,friction,floor_angle
capsule,0.014,0.0035,1200,0.05,30,5,0.8,0.3,20
capsule,0.014,0.0035,1200,0.05,30,5,0.8,0.3,-35
capsule,0.014,0.0035,1200,0.05,30,5,0.8,0.3,0
capsule,0.014,0.0035,1200,0.05,30,5,0.8,0.3,75
"""


def test_batch_floor_angle_column_reaches_the_simulation(tmp_path, capsys):
    # Each row is exactly what sim.simulate gives for that drop with its
    # floor angle (floor coordinates; 1e-13 allows last-bit differences of
    # the CSV round trip); a floor angle outside [-60, 60] deg is a row
    # error naming the column, its range and the value.
    source = tmp_path / "tilted.csv"
    source.write_text(TILTED_CSV, encoding="utf-8")
    out, stdout = batch(tmp_path, capsys, source, "out.csv")
    table = read(out)
    assert "1 row(s) could not be simulated" in stdout
    error = table[table["drop"] == 3]["error"].iloc[0]
    assert "floor_angle" in error and "[-60, 60] deg" in error and "75" in error
    shape = sim.Capsule(length=0.014, radius=0.0035, density=1200)
    times = []
    for row, alpha in enumerate((20.0, -35.0, 0.0)):
        result = sim.simulate(shape, sim.Release(0.05, math.radians(30), 5.0, floor_angle=math.radians(alpha)),
                              sim.Contact(0.8, 0.3), impacts=IMPACTS)
        got = table[table["drop"] == row].sort_values("impact")
        for column in ("time", "x", "vx", "vy", "peak_centre"):
            np.testing.assert_allclose(got[column].to_numpy(float), result.impacts[column][0], rtol=1e-13,
                                       err_msg=column)
        times.append(got["time"].iloc[0])
    assert len(set(times)) == 3  # the tilt changed the drops


def test_huge_angles_give_the_answer_of_their_reduced_form(tmp_path):
    # 1e20 deg is exactly 1e20 mod 360 = fmod(1e20, 360) deg in floating point
    # (IEEE 754 remainder is exact), so both rows must match bit for bit
    import math
    from hopscape.batch import run_batch
    reduced = math.fmod(1e20, 360.0)
    frame = pd.DataFrame({"shape": ["capsule"] * 2, "length": [0.01] * 2, "radius": [0.003] * 2,
                          "density": [1100.0] * 2, "height": [0.05] * 2, "angle": [1e20, reduced],
                          "restitution": [0.8] * 2, "friction": [0.3] * 2})
    table = run_batch(frame, impacts=4)
    first, second = (table[table["drop"] == i].drop(columns="drop").reset_index(drop=True) for i in (0, 1))
    pd.testing.assert_frame_equal(first, second)
    # the Python API likewise, in radians
    shape = sim.Capsule(length=0.01, radius=0.003, density=1100.0)
    many = sim.simulate(shape, sim.Release(0.05, 1e6), sim.Contact(0.8, 0.3), impacts=3)
    one = sim.simulate(shape, sim.Release(0.05, math.fmod(1e6, 2 * math.pi)), sim.Contact(0.8, 0.3), impacts=3)
    assert np.array_equal(many.impacts["time"], one.impacts["time"])


def test_an_empty_optional_cell_takes_its_default(tmp_path):
    # spin, vx, floor_angle are optional columns: an empty cell is the same
    # as no column at all (0), so both rows below are the same drop
    from hopscape.batch import run_batch
    frame = pd.DataFrame({"shape": ["capsule"] * 2, "length": [0.01] * 2, "radius": [0.003] * 2,
                          "density": [1100.0] * 2, "height": [0.05] * 2, "angle": [30.0] * 2,
                          "spin": [np.nan, 0.0], "vx": [np.nan, 0.0], "floor_angle": [np.nan, 0.0],
                          "restitution": [0.8] * 2, "friction": [0.3] * 2})
    table = run_batch(frame, impacts=3)
    assert (table["error"] == "").all()
    first, second = (table[table["drop"] == i].drop(columns="drop").reset_index(drop=True) for i in (0, 1))
    pd.testing.assert_frame_equal(first, second)


def test_batch_messages_name_required_columns_and_the_first_reason(tmp_path, capsys):
    source = tmp_path / "drops.csv"
    source.write_text("shape,radius,density,height,angle,restitution\ncapsule,0.003,1100,0.05,30,0.8\n")
    assert main(["batch", str(source), "--out", str(tmp_path / "out.csv")]) == 2
    err = capsys.readouterr().err
    assert "lacks the column(s) friction (required: shape, radius, density, height, angle, restitution, " \
           "friction; optional: length, spin" in err
    source.write_text("shape,radius,density,height,angle,restitution,friction\ncone,0.003,1100,0.05,30,0.8,0.3\n")
    assert main(["batch", str(source), "--out", str(tmp_path / "out.csv")]) == 2
    assert "(row 0: shape must be one of capsule" in capsys.readouterr().err
    assert main(["batch", str(source), "--out", str(tmp_path / "out.xlsx")]) == 2
    assert "a table is written as .csv or .parquet" in capsys.readouterr().err


def test_a_body_that_stays_in_contact_makes_no_bounce(capsys, tmp_path):
    # restitution 0: the first impact starts sustained contact, the body
    # never leaves the floor, so no visible bounce exists (docs/physics.md
    # section 5; sim/bounces.py notes) and the report says so in words
    path = tmp_path / "impacts.csv"
    assert main(["drop", "--restitution", "0", "--impacts", "3", "--no-plots", "--csv", str(path)]) == 0
    out = capsys.readouterr().out
    assert "best later bounce (centre): none (fewer than two visible bounces)" in out and "nan" not in out
    table = pd.read_csv(path)
    assert table["status"].tolist() == ["contact"] and table["bounce"].isna().all()
    result = sim.simulate(sim.Capsule(length=0.014, radius=0.0035, density=1200.0),
                          sim.Release(0.3, math.radians(30)), sim.Contact(0.0, 0.3), impacts=3)
    bounces = sim.group_bounces(result)
    assert bounces.count.tolist() == [0] and bounces.index[0, 0] == 0


def test_a_misspelled_column_is_refused_not_ignored(tmp_path, capsys):
    # 'lenght' for 'length': ignoring it would simulate the pin as a ball
    # (length 0 by default) and exit 0
    path = tmp_path / "drops.csv"
    path.write_text("shape,lenght,radius,density,height,angle,restitution,friction\n"
                    "capsule,0.018,0.003,1150,0.05,30,0.8,0.3\n")
    assert main(["batch", str(path), "--out", str(tmp_path / "out.csv")]) == 2
    err = capsys.readouterr().err
    assert "column 'lenght' is not a batch column: did you mean 'length'?" in err
    assert not (tmp_path / "out.csv").exists()
    # a column far from every batch column (an id of the user's) is still carried along
    path.write_text("part_id,shape,length,radius,density,height,angle,restitution,friction\n"
                    "A7,capsule,0.018,0.003,1150,0.05,30,0.8,0.3\n")
    assert main(["batch", str(path), "--out", str(tmp_path / "out.csv")]) == 0
    assert "ignoring column(s) part_id" in capsys.readouterr().err
