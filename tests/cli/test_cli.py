"""The shell: results, JSON, figures, and one-line errors with exit code 2."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from slopescreen import critical_saturation, factor_of_safety, fit_envelope
from slopescreen.cli.main import main

ROOT = Path(__file__).resolve().parents[2]
SLOPE = [
    "slope",
    "--slope-deg",
    "34",
    "--depth-m",
    "1.6",
    "--cohesion-kpa",
    "6",
    "--friction-deg",
    "31",
    "--unit-weight",
    "18.5",
    "--saturated-unit-weight",
    "20",
    "--saturation",
    "0.7",
]


def test_slope_json_matches_core(capsys):
    assert main([*SLOPE, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)["results"]
    kw = dict(saturated_unit_weight_kn_m3=20.0)
    assert out["factor_of_safety"] == pytest.approx(
        factor_of_safety(34.0, 1.6, 6.0, 31.0, 18.5, 0.7, **kw)
    )
    assert out["critical_saturation"] == pytest.approx(
        critical_saturation(34.0, 1.6, 6.0, 31.0, 18.5, **kw)
    )
    assert set(out) >= {
        "critical_depth_m",
        "critical_slope_deg",
        "required_cohesion_kpa",
        "stresses_kpa",
    }


def test_slope_text_echoes_every_input_and_one_caution_block(capsys):
    args = [*SLOPE, "--root-cohesion-kpa", "2", "--surcharge-kpa", "3"]
    assert main([*args, "--seismic-coefficient", "0.1"]) == 0
    text = capsys.readouterr().out
    for fragment in (
        "root cohesion 2 kPa",
        "unit weight 18.5 kN/m3, saturated 20 kN/m3, water 9.81 kN/m3",
        "surcharge 3 kPa, seismic k_h 0.1, target FS 1",
    ):
        assert fragment in text
    assert text.count("Screening level only") == 1


def test_slope_json_and_demo_record_share_one_layout(demo_out, capsys):
    assert main([*SLOPE, "--json"]) == 0
    from_shell = json.loads(capsys.readouterr().out)
    out, lines = demo_out  # the demo command, run once for the session (conftest)
    text = "\n".join(lines)
    assert text.count("Screening level only") == 1  # the cautions once per command
    # the demo's report shows every check against the invented landslides
    report = (out / "report.html").read_text()
    for part in (
        "success and prediction rates",
        "Landslide density by class",
        "Back-analysis: effective cohesion",
        "Demo check: the invented landslides were drawn from a hidden soil table",
        "Calibration of cohesion_kpa under wet_season",
        "Sensitivity under wet_season",
    ):
        assert part in report, part
    assert "SLP: 4 x 0.7 = 2.8" in " ".join(text.split())  # calibration finds the hidden c'
    record = json.loads((out / "hillside_check.json").read_text())
    assert set(from_shell) == set(record) - {"envelope"}
    assert set(from_shell["results"]) == set(record["results"])
    assert set(from_shell["inputs"]) == set(record["inputs"])
    assert record["results"]["factor_of_safety"] > 0.0
    assert (out / "mohr_circles.png").stat().st_size > 1000
    cov = record["envelope"]["covariance"]
    assert set(cov) == {
        "cohesion_cohesion_kpa2",
        "cohesion_friction_kpa_deg",
        "friction_friction_deg2",
    }


@pytest.mark.parametrize(
    "command",
    ["slope", "envelope", "run", "check", "score", "backcalc", "calibrate", "sensitivity", "demo"],
)
def test_help_is_plain_text_with_defaults(command, capsys):
    with pytest.raises(SystemExit):
        main([command, "--help"])
    text = capsys.readouterr().out
    assert "``" not in text and "::" not in text and ":mod:" not in text
    if command == "slope":
        assert "(default 9.81)" in text
    if command == "calibrate":
        assert "(default 0.2)" in text and "0.5:1.5:0.05" in text
    if command == "run":
        from slopescreen.maps.outputs.output_names import (
            RUN_OUTPUTS,
            SCENARIO_OUTPUTS,
            TERRAIN_OUTPUTS,
        )

        for name, _, _ in (*TERRAIN_OUTPUTS, *SCENARIO_OUTPUTS, *RUN_OUTPUTS):
            assert name in text


def test_slope_text_shows_cautions(capsys):
    assert main(SLOPE) == 0
    text = capsys.readouterr().out
    assert "factor of safety" in text
    assert "Screening level only" in text and "licensed geotechnical practice" in text


def test_slope_no_solution_is_null_in_json(capsys):
    args = [
        "slope",
        "--slope-deg",
        "0",
        "--depth-m",
        "1",
        "--cohesion-kpa",
        "5",
        "--friction-deg",
        "30",
        "--unit-weight",
        "18",
        "--json",
    ]
    assert main(args) == 0
    out = json.loads(capsys.readouterr().out)["results"]
    assert out["factor_of_safety"] is None  # flat ground: no driving stress


def _write(tmp_path, text, name="tests.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_envelope_json_and_plot(tmp_path, capsys):
    csv = _write(
        tmp_path,
        "specimen,sigma3_kpa,deviator_kpa,pore_pressure_kpa\n"
        "A,100,180,40\nB,200,300,90\nC,300,420,130\n",
    )
    png = tmp_path / "m.png"
    assert main(["envelope", str(csv), "--json", "--plot", str(png)]) == 0
    out = json.loads(capsys.readouterr().out)
    ref = fit_envelope([100.0, 200.0, 300.0], [280.0, 500.0, 720.0], [40.0, 90.0, 130.0])
    assert out["cohesion_kpa"] == pytest.approx(ref.cohesion_kpa)
    assert out["friction_deg"] == pytest.approx(ref.friction_deg)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_envelope_direct_shear(tmp_path, capsys):
    csv = _write(tmp_path, "normal_kpa,shear_kpa\n50,40\n100,69\n150,98\n")
    assert main(["envelope", str(csv), "--plot", str(tmp_path / "d.png")]) == 0
    assert "direct shear" in capsys.readouterr().out
    assert (tmp_path / "d.png").stat().st_size > 1000


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("sigma3_kpa,pore_pressure_kpa\n100,10\n200,20\n", "sigma1_kpa or deviator_kpa"),
        ("sigma3_kpa,sigma1_kpa\n100,abc\n200,500\n", "line 2, column sigma1_kpa: 'abc' is not"),
        ("sigma3_kpa,sigma1_kpa\n-100,300\n200,500\n", "line 2, column sigma3_kpa: -100 kPa"),
        ("sigma3_kpa,sigma1_kpa\n100,300\n", "at least 2 tests"),
        ("a,b\n1,2\n", "header must name sigma3_kpa"),
        (
            "sigma3_kpa,deviator_kpa,normal_kpa,shear_kpa\n100,180,50,40\n200,300,100,69\n",
            "header mixes triaxial (deviator_kpa, sigma3_kpa) and direct-shear",
        ),
    ],
)
def test_envelope_bad_files(tmp_path, capsys, text, fragment):
    csv = _write(tmp_path, text)
    assert main(["envelope", str(csv)]) == 2
    err = capsys.readouterr().err
    assert fragment in err and str(csv) in err
    assert err.count("\n") == 1


def test_a_figure_name_without_a_format_is_refused(tmp_path, capsys):
    csv = _write(tmp_path, "normal_kpa,shear_kpa\n50,40\n100,69\n150,98\n")
    assert main(["envelope", str(csv), "--plot", str(tmp_path / "d.figure")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--plot" in err and ".png" in err
    assert not (tmp_path / "d.figure").exists()


def test_missing_file(tmp_path, capsys):
    assert main(["envelope", str(tmp_path / "nope.csv")]) == 2
    assert "nope.csv: cannot read" in capsys.readouterr().err


def test_bad_options_give_one_line(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["slope", "--slope-deg", "abc"])
    assert exc.value.code == 2
    assert capsys.readouterr().err.count("\n") == 1
    with pytest.raises(SystemExit) as exc:
        main([*SLOPE, "--bogus", "1"])
    assert exc.value.code == 2


def test_out_of_range_value_names_option(capsys):
    args = [*SLOPE]
    args[args.index("--saturation") + 1] = "1.5"
    assert main(args) == 2
    assert "saturation must be in [0, 1], got 1.5" in capsys.readouterr().err


def test_console_script_no_traceback():
    # The installed entry point, as a user runs it.
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "slopescreen.cli.main",
            "slope",
            "--slope-deg",
            "95",
            "--depth-m",
            "1",
            "--cohesion-kpa",
            "1",
            "--friction-deg",
            "30",
            "--unit-weight",
            "18",
        ],
        capture_output=True,
        text=True,
        check=False,
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert proc.stderr.strip() == (
        "slopescreen slope: error: slope_deg must be in [0, 90) degrees, got 95"
    )


def test_failed_plot_keeps_previous_figure(tmp_path, capsys):
    csv = _write(tmp_path, "sigma3_kpa,sigma1_kpa\n100,300\n200,520\n300,760\n")
    png = tmp_path / "m.png"
    png.write_bytes(b"previous figure")
    bad = _write(tmp_path, "sigma3_kpa,sigma1_kpa\n100,300\n200,x\n", "bad.csv")
    assert main(["envelope", str(bad), "--plot", str(png)]) == 2
    assert png.read_bytes() == b"previous figure"
    assert main(["envelope", str(csv), "--plot", str(png)]) == 0
    assert png.read_bytes()[:4] == b"\x89PNG"
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_unwritable_output_folder_is_one_line(tmp_path, capsys):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    code = main(
        [
            "run",
            str(ROOT / "demo_region" / "quillbrook_scenarios.toml"),
            "--out",
            str(blocker / "out"),
            "--only",
            "dry_season",
            "--quiet",
        ]
    )
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and "Not a directory" in err and "Traceback" not in err


def test_one_range_per_quantity_in_shell_soil_table_and_cells(tmp_path, capsys):
    # --unit-weight 190 was accepted by the shell while the soil table refused it
    import slopescreen_udfs as udf

    code = main(["slope", "--slope-deg", "30", "--depth-m", "1.5", "--cohesion-kpa", "2",
                 "--friction-deg", "30", "--unit-weight", "190"])  # fmt: skip
    err = capsys.readouterr().err
    assert code == 2 and "unit_weight_kn_m3 must be in [5, 30] kN/m3, got 190" in err
    code = main(["slope", "--slope-deg", "35", "--depth-m", "0", "--cohesion-kpa", "2",
                 "--friction-deg", "30", "--unit-weight", "19"])  # fmt: skip
    assert code == 2 and "depth_m must be in [0.05, 50] m, got 0" in capsys.readouterr().err
    assert "unit_weight_kn_m3 must be in [5, 30] kN/m3" in udf.SS_FS(30, 1.5, 2, 30, 190)
    from slopescreen.maps.region.config import SOIL_FIELDS

    assert SOIL_FIELDS["unit_weight_kn_m3"][:2] == (5.0, 30.0)


def test_envelope_errors_name_line_and_specimen(tmp_path, capsys):
    path = tmp_path / "tests.csv"
    path.write_text("specimen,sigma3_kpa,sigma1_kpa,pore_pressure_kpa\nT1,50,150,0\nT2,100,90,0\n")
    assert main(["envelope", str(path)]) == 2
    err = capsys.readouterr().err
    assert "tests.csv: line 3, specimen T2: sigma1_kpa 90 is below sigma3_kpa 100" in err
    path.write_text(
        "specimen,sigma3_kpa,sigma1_kpa,pore_pressure_kpa\nT1,50,150,60\nT2,100,290,0\n"
    )
    assert main(["envelope", str(path)]) == 2
    assert "line 2, specimen T1: pore_pressure_kpa 60 exceeds sigma3_kpa 50" in (
        capsys.readouterr().err
    )


def test_slope_help_ranges_are_the_enforced_ones(capsys):
    # the help prints each option's range from the one table the command enforces: a value
    # just outside a printed bound is refused, the bound itself (if closed) accepted
    import re

    from slopescreen.cli.options import SLOPE_OPTIONS
    from slopescreen.ranges import RANGES

    with pytest.raises(SystemExit):
        main(["slope", "--help"])
    text = " ".join(capsys.readouterr().out.split("slope and soil:")[1].split())
    base = dict(zip(SLOPE[1::2], SLOPE[2::2], strict=True))
    checked = 0
    for option, dest, _, _ in SLOPE_OPTIONS:
        if dest not in RANGES:
            continue
        shown = re.search(re.escape(option) + r" X [^\[]*\[([^,]+), ([^\])]+)([\])])", text)
        assert shown, option
        low, high, closed = float(shown[1]), float(shown[2]), shown[3] == "]"
        for value, ok in ((low, True), (low - 1e-6 * max(1, abs(low)) - 1e-9, False),
                          (high, closed), (high * (1 + 1e-6) + 1e-9, False)):  # fmt: skip
            args = dict(base, **{option: repr(value)})
            if option == "--unit-weight":  # the saturated weight stays above it and 9.81
                args["--saturated-unit-weight"] = repr(max(value, 9.81))
            if option == "--saturated-unit-weight":  # and the moist weight below it
                args["--unit-weight"] = repr(min(value, 18.5))
            code = main(["slope", *(f"{k}={v}" for k, v in args.items()), "--json"])
            capsys.readouterr()
            assert (code == 0) == ok, (option, value)
        checked += 1
    assert checked >= 10
