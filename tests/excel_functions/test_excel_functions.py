"""Spreadsheet functions called as xlwings calls them: floats, None for empty cells, lists of
lists for ranges. The expected values come from the core functions, which are checked
against outside references in the other test files."""

import re

import numpy as np
import pytest
import slopescreen_udfs as udf
from openpyxl import load_workbook
from openpyxl.utils import column_index_from_string, range_boundaries

import slopescreen as core


def test_fs_single_cells_match_core():
    assert udf.SS_FS(34.0, 1.6, 6.0, 31.0, 18.5, 0.7, 20.0, 2.0) == pytest.approx(
        core.factor_of_safety(
            34.0, 1.6, 6.0, 31.0, 18.5, 0.7, saturated_unit_weight_kn_m3=20.0, root_cohesion_kpa=2.0
        )
    )


def test_empty_optional_cells_take_defaults():
    # xlwings passes [[None]] for an empty cell declared as a 2-D range.
    full = udf.SS_FS(30.0, 2.0, 3.0, 30.0, 18.0, [[None]], None, None, None, None, None)
    assert full == pytest.approx(core.factor_of_safety(30.0, 2.0, 3.0, 30.0, 18.0))
    assert udf.SS_CRIT_DEPTH(25.0, 9.6, 15.0, 15.7, None, 2.0) == pytest.approx(
        core.critical_depth(25.0, 9.6, 15.0, 15.7, target_fs=2.0)
    )


def test_column_range_spills_as_column():
    slopes = [[20.0], [30.0], [40.0]]
    out = udf.SS_FS(slopes, 1.5, 4.0, 32.0, 18.0)
    expected = core.factor_of_safety(np.array([20.0, 30.0, 40.0]), 1.5, 4.0, 32.0, 18.0)
    assert np.array(out).shape == (3, 1)
    assert np.allclose(np.array(out, dtype=float).ravel(), expected)
    row = udf.SS_CRIT_SLOPE([[1.0, 2.0]], 5.0, 30.0, 18.0)
    assert np.array(row).shape == (1, 2)


def test_bad_input_is_text_not_exception():
    assert udf.SS_FS(95.0, 1.0, 1.0, 30.0, 18.0).startswith("#SLOPESCREEN: slope_deg must be in")
    assert "depth_m: the cell is empty" in udf.SS_FS(30.0, None, 1.0, 30.0, 18.0)
    assert "'abc' is not a number" in udf.SS_FS(30.0, "abc", 1.0, 30.0, 18.0)
    assert "range has an empty cell" in udf.SS_FS([[30.0], [None]], 1.0, 1.0, 30.0, 18.0)
    assert "at least 2 tests" in udf.SS_ENVELOPE([[100.0]], [[300.0]])


def test_no_solution_and_flat_ground_are_labelled():
    assert udf.SS_CRIT_DEPTH(20.0, 0.0, 35.0, 18.0) == udf.NO_SOLUTION
    assert udf.SS_FS(0.0, 1.0, 5.0, 30.0, 18.0) == udf.NO_DRIVING_STRESS


def test_strength_functions_match_core():
    assert udf.SS_SHEAR_STRENGTH(150.0, 8.0, 28.0, 50.0) == pytest.approx(
        core.shear_strength_kpa(150.0, 8.0, 28.0, 50.0)
    )
    assert udf.SS_EFF_STRESS(100.0, 30.0) == 70.0
    # one argument order: minor principal stress first (sigma3, sigma1), as SS_ENVELOPE
    assert udf.SS_MOHR_CENTRE(100.0, 300.0) == 200.0
    assert udf.SS_MOHR_RADIUS(100.0, 300.0) == 100.0
    assert udf.SS_PLANE_ANGLE(30.0) == 60.0
    pairs = udf.SS_PLANE_STRESSES([[100.0], [150.0]], [[300.0], [500.0]], 30.0)
    ref = core.failure_plane_stresses(np.array([300.0, 500.0]), np.array([100.0, 150.0]), 30.0)
    assert np.allclose(np.array(pairs).T, np.array(ref))


def test_envelope_table():
    s3, s1 = [[50.0], [100.0], [200.0]], [[170.0], [310.0], [590.0]]
    table = dict((k, v) for k, v in udf.SS_ENVELOPE(s3, s1))
    ref = core.fit_envelope([50.0, 100.0, 200.0], [170.0, 310.0, 590.0])
    assert table["cohesion_kpa"] == pytest.approx(ref.cohesion_kpa)
    assert table["friction_deg"] == pytest.approx(ref.friction_deg)
    assert table["n"] == 3
    two = dict((k, v) for k, v in udf.SS_DIRECT_SHEAR([[50.0], [100.0]], [[40.0], [69.0]]))
    assert "poorly determined" in two["warnings"]
    assert two["cohesion_se_kpa"] == "n/a (2 tests)"


# --- the demo workbook, evaluated formula by formula with the UDFs --------------------------

_CALL = re.compile(r"^=(SS_[A-Z_]+)\((.*)\)$")


def _evaluate(ws):
    """Row-major evaluation of '=SS_...(refs)' and '=A1' formulas, with spilled results."""
    values = {}
    for row in ws.iter_rows():
        for cell in row:
            key = (cell.row, cell.column)
            v = cell.value
            if not (isinstance(v, str) and v.startswith("=")):
                values.setdefault(key, v)
                continue
            match = _CALL.match(v)
            if match is None:
                ref = v[1:]
                values[key] = values[(int(ref[1:]), column_index_from_string(ref[0]))]
                continue
            name, arg_text = match.groups()
            args = []
            for arg in arg_text.split(","):
                if not arg:
                    args.append(None)
                elif ":" in arg:
                    c0, r0, c1, r1 = range_boundaries(arg)
                    args.append(
                        [[values[(r, c)] for c in range(c0, c1 + 1)] for r in range(r0, r1 + 1)]
                    )
                elif arg[0].isalpha():
                    c0, r0, _, _ = range_boundaries(arg)
                    args.append(values[(r0, c0)])
                else:
                    args.append(float(arg))
            result = getattr(udf, name)(*args)
            if isinstance(result, list):  # spill
                for i, out_row in enumerate(result):
                    for j, x in enumerate(out_row):
                        values[(cell.row + i, cell.column + j)] = x
            else:
                values[key] = result
    return values


def test_demo_workbook_formulas_agree_with_python(tmp_path):
    import make_demo_workbook

    path = make_demo_workbook.write_workbook(tmp_path / "demo.xlsx")
    wb = load_workbook(path)
    for sheet, count in (("Slope", 5), ("Reliability", 4)):
        ws = wb[sheet]
        values = _evaluate(ws)
        checked = 0
        for row in range(1, ws.max_row + 1):
            formula = ws.cell(row, 2).value
            if isinstance(formula, str) and formula.startswith("=SS_"):
                assert values[(row, 2)] == pytest.approx(ws.cell(row, 3).value, rel=1e-12)
                checked += 1
        assert checked == count, sheet
    lab = wb["LabTests"]
    values = _evaluate(lab)
    fit_row = next(
        r for r in range(1, lab.max_row + 1) if str(lab.cell(r, 1).value).startswith("=SS_ENVELOPE")
    )
    for i in range(7):
        assert values[(fit_row + i, 1)] == lab.cell(fit_row + i, 4).value
        expected = lab.cell(fit_row + i, 5).value
        got = values[(fit_row + i, 2)]
        assert got == (pytest.approx(expected) if isinstance(expected, float) else expected)
    errors = [v for v in values.values() if isinstance(v, str) and v.startswith("#SLOPESCREEN")]
    assert errors == []
    # every LabTests formula has slopescreen's Python value beside it
    compared = 0
    for row in range(2, lab.max_row + 1):
        if str(lab.cell(row, 5).value).startswith("=SS_EFF_STRESS"):
            for col in (5, 6):
                assert values[(row, col)] == pytest.approx(lab.cell(row, col + 2).value)
                compared += 1
        if str(lab.cell(row, 2).value).startswith("=SS_MOHR_CENTRE"):
            for col in range(2, 7):
                assert values[(row, col)] == pytest.approx(lab.cell(row, col + 6).value)
                compared += 1
    assert compared == 4 * 2 + 4 * 5
    assert wb.sheetnames[0] == "Read me"


def test_probability_functions_match_core():
    from slopescreen.reliability import Spread, slope_reliability

    ref = slope_reliability(
        {
            "slope_deg": 35.0,
            "depth_m": 2.0,
            "unit_weight_kn_m3": 19.0,
            "saturation": 0.5,
            "cohesion_kpa": Spread.normal(7.0, 1.5),
            "friction_deg": Spread.normal(31.0, 2.0),
        },
        {("cohesion_kpa", "friction_deg"): -0.4},
    )
    assert udf.SS_PF(35.0, 2.0, 7.0, 1.5, 31.0, 2.0, 19.0, 0.5, -0.4) == pytest.approx(
        ref.probability_of_failure
    )
    assert udf.SS_BETA(35.0, 2.0, 7.0, 1.5, 31.0, 2.0, 19.0, 0.5, -0.4, "taylor") == pytest.approx(
        ref.reliability_index
    )
    mc = udf.SS_PF(35.0, 2.0, 7.0, 1.5, 31.0, 2.0, 19.0, 0.5, -0.4, "monte_carlo", 20000, 5)
    assert abs(mc - ref.probability_of_failure) < 0.02
    assert udf.SS_PF(35.0, 2.0, 7.0, -1.0, 31.0, 2.0, 19.0).startswith(
        "#SLOPESCREEN: cohesion_sd_kpa must be in [0, 1000]"
    )
    assert "allowed: taylor, monte_carlo" in udf.SS_PF(
        35.0, 2.0, 7.0, 1.5, 31.0, 2.0, 19.0, None, None, "guess"
    )


def test_storm_functions_match_core():
    from slopescreen.storm import pressure_head_m, storm_factor_of_safety

    storm = dict(
        slope_deg=30.0,
        water_table_depth_m=0.5,
        rain_mm_h=10.0,
        duration_h=2.0,
        hydraulic_conductivity_m_s=1e-5,
        diffusivity_m2_s=1e-4,
    )
    rest = list(storm.values())[1:]  # slope first, then depth and time, as in SS_FS
    assert udf.SS_STORM_HEAD(30.0, 1.0, 3.0, *rest) == pytest.approx(
        pressure_head_m(1.0, 3.0, **storm)
    )
    column = udf.SS_STORM_FS(30.0, [[0.5], [1.0]], 6.0, 2.0, 33.0, 19.0, 0.5, 10.0, 2.0, 1e-5, 1e-4)
    ref = storm_factor_of_safety(
        np.array([0.5, 1.0]),
        6.0,
        cohesion_kpa=2.0,
        friction_deg=33.0,
        unit_weight_kn_m3=19.0,
        **storm,
    )
    assert np.allclose(np.array(column, dtype=float).ravel(), ref)
    assert "rain_mm_h must be in [0, 1000]" in udf.SS_STORM_HEAD(
        30.0, 1.0, 1.0, 0.5, -3.0, 2.0, 1e-5, 1e-4
    )


def test_readme_lists_every_cell_function():
    from pathlib import Path

    folder = Path(udf.__file__).resolve().parent
    source = (folder / "slopescreen_udfs.py").read_text()
    readme = (folder / "README.md").read_text()
    functions = re.findall(r"^def (SS_[A-Z_]+)\(", source, flags=re.MULTILINE)
    assert len(functions) >= 17
    for name in functions:
        assert f"`{name}(" in readme, name


def test_root_functions_are_the_cores():
    # thin shells: the same numbers as slopescreen.root_cohesion (tested against its
    # analytic cases in tests/test_soil_depth.py)
    from slopescreen.root_cohesion import root_cohesion_after_harvest_kpa

    assert udf.SS_ROOTS_AFTER_CUT(0.0, 6.0) == pytest.approx(6.0)
    assert udf.SS_ROOTS_AFTER_CUT(10.0, 6.0, 4.0) == pytest.approx(
        float(root_cohesion_after_harvest_kpa(10.0, 6.0, 4.0))
    )
    column = udf.SS_ROOTS_AT_DEPTH(5.0, [[0.5], [1.5]], 1.0)
    assert column == [[5.0], [0.0]]
    assert udf.SS_ROOTS_AT_DEPTH(5.0, 1.0, 1.0, "Exponential") == pytest.approx(5.0 * np.exp(-1))
    assert "root profile must be one of" in udf.SS_ROOTS_AT_DEPTH(5.0, 1.0, 1.0, "linear")
    assert "rooting_depth_m" in udf.SS_ROOTS_AT_DEPTH(5.0, 1.0, None)
