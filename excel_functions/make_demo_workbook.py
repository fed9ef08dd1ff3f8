"""Write the demo workbook: one invented slope and one set of lab tests, checked with the
slopescreen cell functions. Each formula has beside it the value slopescreen's Python gives,
so a user can see at a glance that the spreadsheet agrees.

    python excel_functions/make_demo_workbook.py [OUT.xlsx]
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import slopescreen_udfs as udf  # noqa: E402
from openpyxl import Workbook  # noqa: E402
from openpyxl.styles import Font  # noqa: E402

from slopescreen.cautions import CAUTIONS  # noqa: E402
from slopescreen.maps.io.labtests import read_lab_tests  # noqa: E402

DEFAULT_OUT = HERE / "slopescreen_demo.xlsx"
LAB_TESTS = HERE.parent / "demo_region" / "lab_tests.csv"

# Invented hillside of the fictitious Quillbrook catchment (demo data only).
SLOPE_INPUTS = [
    ("slope_deg", 34.0, "slope angle, degrees"),
    ("depth_m", 1.6, "vertical depth of slip plane, m"),
    ("cohesion_kpa", 6.0, "effective cohesion c', kPa"),
    ("friction_deg", 31.0, "effective friction angle phi', degrees"),
    ("unit_weight_kn_m3", 18.5, "unit weight above water table, kN/m3"),
    ("saturation", 0.7, "saturation ratio m = hw/z"),
    ("saturated_unit_weight_kn_m3", 20.0, "unit weight below water table, kN/m3"),
    ("root_cohesion_kpa", 2.0, "root cohesion, kPa"),
]


def _slope_sheet(wb: Workbook) -> None:
    ws = wb.create_sheet("Slope")
    ws.append(["input", "value", "meaning"])
    for row in SLOPE_INPUTS:
        ws.append(list(row))
    v = {name: value for name, value, _ in SLOPE_INPUTS}
    ws.append([])
    ws.append(["result", "formula", "slopescreen Python value"])
    soil = "B8,B9"  # saturated unit weight, root cohesion
    results = [
        (
            "factor of safety",
            f"=SS_FS(B2,B3,B4,B5,B6,B7,{soil})",
            udf.SS_FS(*[v[k] for k, _, _ in SLOPE_INPUTS]),
        ),
        (
            "critical saturation",
            f"=SS_CRIT_SATURATION(B2,B3,B4,B5,B6,,{soil})",
            udf.SS_CRIT_SATURATION(34.0, 1.6, 6.0, 31.0, 18.5, None, 20.0, 2.0),
        ),
        (
            "critical depth, m",
            f"=SS_CRIT_DEPTH(B2,B4,B5,B6,B7,,{soil})",
            udf.SS_CRIT_DEPTH(34.0, 6.0, 31.0, 18.5, 0.7, None, 20.0, 2.0),
        ),
        (
            "critical slope, deg",
            f"=SS_CRIT_SLOPE(B3,B4,B5,B6,B7,,{soil})",
            udf.SS_CRIT_SLOPE(1.6, 6.0, 31.0, 18.5, 0.7, None, 20.0, 2.0),
        ),
        (
            "cohesion for FS 1.3, kPa",
            f"=SS_REQ_COHESION(B2,B3,B5,B6,B7,1.3,{soil})",
            udf.SS_REQ_COHESION(34.0, 1.6, 31.0, 18.5, 0.7, 1.3, 20.0, 2.0),
        ),
    ]
    for label, formula, expected in results:
        ws.append([label, formula, expected])
    ws.column_dimensions["A"].width = 30
    ws.column_dimensions["C"].width = 40


def _lab_sheet(wb: Workbook) -> None:
    ws = wb.create_sheet("LabTests")
    tests = read_lab_tests(LAB_TESTS)
    cols = tests.columns
    ws.append(
        [
            "specimen",
            "sigma3_kpa",
            "sigma1_kpa",
            "pore_pressure_kpa",
            "sigma3_eff_kpa",
            "sigma1_eff_kpa",
            "Python: sigma3_eff_kpa",
            "Python: sigma1_eff_kpa",
        ]
    )
    n = len(tests.labels)
    for i, label in enumerate(tests.labels):
        r = i + 2
        ws.append(
            [
                label,
                float(cols["sigma3_kpa"][i]),
                float(cols["sigma1_kpa"][i]),
                float(cols["pore_pressure_kpa"][i]),
                f"=SS_EFF_STRESS(B{r},D{r})",
                f"=SS_EFF_STRESS(C{r},D{r})",
                udf.SS_EFF_STRESS(
                    float(cols["sigma3_kpa"][i]), float(cols["pore_pressure_kpa"][i])
                ),
                udf.SS_EFF_STRESS(
                    float(cols["sigma1_kpa"][i]), float(cols["pore_pressure_kpa"][i])
                ),
            ]
        )
    last = n + 1
    ws.append([])
    top = last + 2
    ws.cell(top, 1, "envelope fit (spills 7 x 2)").font = Font(bold=True)
    ws.cell(top + 1, 1, f"=SS_ENVELOPE(B2:B{last},C2:C{last},D2:D{last})")
    expected = udf.SS_ENVELOPE(
        [[x] for x in cols["sigma3_kpa"]],
        [[x] for x in cols["sigma1_kpa"]],
        [[x] for x in cols["pore_pressure_kpa"]],
    )
    ws.cell(top, 4, "slopescreen Python value").font = Font(bold=True)
    for j, (name, value) in enumerate(expected):
        ws.cell(top + 1 + j, 4, name)
        ws.cell(top + 1 + j, 5, value)
    friction_cell = f"B{top + 2}"
    below = top + 9
    ws.cell(below, 1, "per test").font = Font(bold=True)
    ws.append(
        [
            "specimen",
            "Mohr centre, kPa",
            "Mohr radius, kPa",
            "failure plane, deg",
            "sigma'_f, kPa",
            "tau_f, kPa",
        ]
    )
    for i in range(n):
        r = i + 2
        ws.append(
            [
                f"=A{r}",
                f"=SS_MOHR_CENTRE(E{r},F{r})",
                f"=SS_MOHR_RADIUS(E{r},F{r})",
                f"=SS_PLANE_ANGLE({friction_cell})",
                f"=SS_PLANE_STRESSES(E{r},F{r},{friction_cell})",
            ]
        )
    # slopescreen's Python value beside every formula (columns H-L, same rows)
    s3 = [float(cols["sigma3_kpa"][i] - cols["pore_pressure_kpa"][i]) for i in range(n)]
    s1 = [float(cols["sigma1_kpa"][i] - cols["pore_pressure_kpa"][i]) for i in range(n)]
    friction = expected[1][1]
    for j, title in enumerate(
        ["Python: centre", "Python: radius", "Python: plane", "Python: sigma'_f", "Python: tau_f"]
    ):
        ws.cell(below + 1, 8 + j, title).font = Font(bold=True)
    for i in range(n):
        row = below + 2 + i
        plane = udf.SS_PLANE_STRESSES(s3[i], s1[i], friction)[0]
        values = [
            udf.SS_MOHR_CENTRE(s3[i], s1[i]),
            udf.SS_MOHR_RADIUS(s3[i], s1[i]),
            udf.SS_PLANE_ANGLE(friction),
            *plane,
        ]
        for j, value in enumerate(values):
            ws.cell(row, 8 + j, value)
    ws.column_dimensions["A"].width = 28


def _reliability_sheet(wb: Workbook) -> None:
    ws = wb.create_sheet("Reliability")
    ws.append(["input", "value", "meaning"])
    rows = [
        ("slope_deg", 34.0, "slope angle, degrees"),
        ("depth_m", 1.6, "vertical depth of slip plane, m"),
        ("cohesion_kpa", 6.0, "mean c', kPa"),
        ("cohesion_sd_kpa", 2.0, "standard deviation of c', kPa"),
        ("friction_deg", 31.0, "mean phi', degrees"),
        ("friction_sd_deg", 2.0, "standard deviation of phi', degrees"),
        ("unit_weight_kn_m3", 18.5, "unit weight, kN/m3"),
        ("saturation", 0.7, "saturation ratio m"),
        ("c_phi_correlation", -0.3, "correlation of c' and phi'"),
        ("method", "taylor", "taylor or monte_carlo"),
        ("water_table_depth_m", 1.0, "storm: initial water-table depth, m"),
        ("rain_mm_h", 20.0, "storm: rain intensity, mm/h"),
        ("duration_h", 12.0, "storm: duration, h"),
        ("hydraulic_conductivity_m_s", 2e-5, "storm: saturated K, m/s"),
        ("diffusivity_m2_s", 5e-5, "storm: hydraulic diffusivity D0, m2/s"),
    ]
    for row in rows:
        ws.append(list(row))
    v = {name: value for name, value, _ in rows}
    ws.append([])
    ws.append(["result", "formula", "slopescreen Python value"])
    pf_args = "B2,B3,B4,B5,B6,B7,B8,B9,B10,B11"
    results = [
        (
            "probability FS < 1",
            f"=SS_PF({pf_args})",
            udf.SS_PF(34.0, 1.6, 6.0, 2.0, 31.0, 2.0, 18.5, 0.7, -0.3, "taylor"),
        ),
        (
            "reliability index",
            f"=SS_BETA({pf_args})",
            udf.SS_BETA(34.0, 1.6, 6.0, 2.0, 31.0, 2.0, 18.5, 0.7, -0.3, "taylor"),
        ),
        (
            "pressure head at 1.6 m, end of storm",
            "=SS_STORM_HEAD(B2,B3,B14,B12,B13,B14,B15,B16)",
            udf.SS_STORM_HEAD(34.0, 1.6, 12.0, v["water_table_depth_m"], 20.0, 12.0, 2e-5, 5e-5),
        ),
        (
            "FS at 1.6 m, end of storm",
            "=SS_STORM_FS(B2,B3,B14,B4,B6,B8,B12,B13,B14,B15,B16)",
            udf.SS_STORM_FS(34.0, 1.6, 12.0, 6.0, 31.0, 18.5, 1.0, 20.0, 12.0, 2e-5, 5e-5),
        ),
    ]
    for label, formula, expected in results:
        ws.append([label, formula, expected])
    ws.column_dimensions["A"].width = 36
    ws.column_dimensions["C"].width = 40


def _notes_sheet(wb: Workbook) -> None:
    ws = wb.active  # the first sheet a user sees
    ws.title = "Read me"
    ws.append(
        [
            "slopescreen demo workbook: invented data for the fictitious Quillbrook "
            "catchment; not a real site."
        ]
    )
    ws.append(
        ["The formulas need the slopescreen cell functions loaded (see excel_functions/README.md)."]
    )
    ws.append(
        [
            "Beside every formula stands the value slopescreen's Python gives for the same "
            "inputs, so you can see at a glance that the spreadsheet agrees."
        ]
    )
    ws.append(
        [
            "Argument order, the same in every function: slope_deg, depth_m (and time_h), "
            "strength, unit weights, water, then the optional cells; stresses minor before "
            "major (sigma3, sigma1)."
        ]
    )
    for line in CAUTIONS:
        ws.append([f"CAUTION: {line}"])
    ws.column_dimensions["A"].width = 120


def write_workbook(out: Path = DEFAULT_OUT) -> Path:
    wb = Workbook()
    _notes_sheet(wb)
    _slope_sheet(wb)
    _lab_sheet(wb)
    _reliability_sheet(wb)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = out.with_name(f".{out.name}.tmp")
    wb.save(tmp)
    tmp.replace(out)
    return out


if __name__ == "__main__":
    print(write_workbook(Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_OUT))
