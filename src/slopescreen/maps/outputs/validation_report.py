"""The report's section on known landslides, built from the manifest alone (``inventory``,
``back_analysis``, ``calibration``, ``sensitivity``), so a command run after the maps can
rewrite it in place."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from slopescreen.maps.outputs.html_parts import boxed_table, embedded_image, esc, num
from slopescreen.maps.outputs.output_names import SUCCESS_RATE

# where the section stands in report.html, so a later command can rewrite it in place
SECTION_START = "<!-- slopescreen:validation -->"
SECTION_END = "<!-- /slopescreen:validation -->"
GLANCE_START = "<!-- slopescreen:scores -->"  # the scores' line on the first screen
GLANCE_END = "<!-- /slopescreen:scores -->"


def glance_scores(manifest: dict[str, Any]) -> str:
    """One line for the first screen: how well each scored map ranks the known landslides
    (success AUC, and the held-out slides' prediction AUC); "" when none were scored."""
    inv = manifest.get("inventory")
    if not inv or not inv.get("scenarios"):
        return ""
    items = "; ".join(
        f"{esc(r['scenario'])} {num(r['success_auc'], '.2f')} "
        f"(held out {num(r['prediction_auc'], '.2f')})"
        for r in inv["scenarios"]
    )
    return (
        f"<p><strong>Against {inv['landslides']} known landslides</strong> (success AUC: 0.5 "
        f"is chance, 1 puts every slide on the least stable ground): {items}. "
        "<a href='#inventory'>Scores</a>.</p>"
    )


def validation_section(manifest: dict[str, Any], out: Path) -> str:
    parts: list[str] = []
    inv = manifest.get("inventory")
    if inv:
        parts += _scores(inv, out)
    for entry in (manifest.get("back_analysis") or {}).values():
        parts += _back_analysis(entry, out)
    for entry in (manifest.get("calibration") or {}).values():
        parts += _calibration(entry, out)
    for entry in (manifest.get("sensitivity") or {}).values():
        parts += _sensitivity(entry, out)
    if not parts:
        return ""
    return (
        "<details class='part' id='inventory'><summary><h2>Known landslides: scores, "
        "back-analysis, sensitivity</h2></summary>" + "\n".join(parts) + "</details>"
    )


def _scores(inv: dict[str, Any], out: Path) -> list[str]:
    parts = [
        f"<p>Scored against <code>{esc(Path(inv['source']).name)}</code>: {inv['landslides']} "
        f"landslides ({esc(inv['kind'])}: {esc(inv['part'])}), {inv['landslide_cells']} cells; "
        f"held out {esc(inv['split_note'])}. The success rate ranks every mapped cell from the "
        "least to the most stable and follows the share of landslide cells against the share "
        "of area (Chung &amp; Fabbri 2003); 0.5 is no better than chance, 1 puts every "
        "landslide on the least stable ground. The prediction rate does the same for the "
        "held-out landslides only. The ROC area counts cells without a landslide as "
        "negatives; its standard error (Hanley &amp; McNeil 1982) counts landslides, not "
        "cells. A map fitted to these landslides scores itself well: read the prediction "
        "rate.</p>"
    ]
    head = [
        "scenario",
        "success AUC",
        "prediction AUC",
        "ROC AUC (SE)",
        "by P(FS<1)",
        "flagged FS<1",
        "landslide cells flagged",
        "stable cells flagged",
    ]
    rows = []
    for r in inv["scenarios"]:
        rows.append(
            [
                esc(r["scenario"]),
                num(r["success_auc"], ".3f"),
                num(r["prediction_auc"], ".3f"),
                f"{num(r['roc_auc'], '.3f')} ({num(r['roc_auc_se'], '.3f')})",
                num(r["pf_success_auc"], ".3f"),
                _pct(r["flagged_share"]),
                _pct(r["captured_share"]),
                _pct(r["false_alarm_share"]),
            ]
        )
    parts.append(boxed_table(head, rows))
    for r in inv["scenarios"]:
        name = r["scenario"]
        parts.append(f"<h3>{esc(name)}: success and prediction rates</h3>")
        parts.append(embedded_image(out / name / SUCCESS_RATE, f"success rate of {name}"))
        density = [d for d in r["density"] if d["soil_unit"] == "all"]
        parts.append(
            "<p>Landslide density by class (each landslide counted once, in the class of its "
            "least stable cell) and frequency ratio (share of landslide cells / share of "
            "area; above 1: more landslides than the area alone explains).</p>"
            + boxed_table(
                ["class", "area (ha)", "landslides", "per km2", "frequency ratio"],
                [
                    [
                        esc(d["class"]),
                        num(d["area_ha"], ",.1f"),
                        esc(d["landslides"]),
                        num(d["landslides_per_km2"], ".3g"),
                        num(d["frequency_ratio"], ".2f"),
                    ]
                    for d in density
                ],
            )
        )
        units = sorted({d["soil_unit"] for d in r["density"]} - {"all"})
        classes = [d["class"] for d in density]
        by = {(d["soil_unit"], d["class"]): d for d in r["density"]}
        parts.append(
            "<p>Frequency ratio within each soil unit (the unit's share of landslide cells in "
            "the class over its share of area there; - where the unit has no area in the class "
            "or no landslide).</p>"
            + boxed_table(
                ["soil unit", *classes, "landslides"],
                [
                    [
                        esc(u),
                        *(num(by[(u, c)]["frequency_ratio"], ".2f") for c in classes),
                        esc(sum(int(by[(u, c)]["landslides"]) for c in classes)),
                    ]
                    for u in units
                ],
            )
        )
    parts += [f"<p class='warn'>{esc(w)}</p>" for w in inv.get("warnings", [])]
    return parts


def _pct(value: object) -> str:
    return num(100 * float(value), ".1f") + "%" if isinstance(value, int | float) else "-"


def _back_analysis(entry: dict[str, Any], out: Path) -> list[str]:
    rows = [
        [
            esc(u["soil_unit"]),
            esc(u["cells"]),
            num(u["median"]),
            f"{num(u['q1'])} to {num(u['q3'])}",
            esc(u["no_solution"]),
            num(u["soil_table"]),
        ]
        for u in entry["units"]
    ]
    return [
        f"<h3>Back-analysis: {esc(entry['parameter_label'])} under {esc(entry['scenario'])}</h3>",
        f"<p>For each landslide cell, the value of {esc(entry['parameter_label'])} that brings "
        f"FS to 1 under the scenario's wetness, the other parameters as in the soil table "
        f"({esc(entry['method'])}). Cells with no solution: {esc(entry['no_solution_note'])}. "
        "Medians well away from the table's value question the table, the wetness or the "
        "inventory.</p>",
        boxed_table(
            ["soil unit", "cells", "median", "quartiles", "no solution", "soil table"], rows
        ),
        embedded_image(out / entry["figure"], f"back-analysed {entry['parameter']}"),
    ]


def _calibration(entry: dict[str, Any], out: Path) -> list[str]:
    rows = [
        [
            esc(u["soil_unit"]),
            num(u["before"]),
            num(u["multiplier"], ".3g"),
            num(u["after"]),
            esc(u["note"]),
        ]
        for u in entry["units"]
    ]
    b, a = entry["before"], entry["after"]
    summary = boxed_table(
        ["", "success AUC (training)", "prediction AUC (held out)", "flagged FS < 1"],
        [
            [
                "before",
                num(b["train_auc"], ".3f"),
                num(b["test_auc"], ".3f"),
                _pct(b["flagged_share"]),
            ],
            [
                "after",
                num(a["train_auc"], ".3f"),
                num(a["test_auc"], ".3f"),
                _pct(a["flagged_share"]),
            ],
        ],
    )
    reference = entry.get("reference")
    return [
        f"<h3>Calibration of {esc(entry['parameter'])} under {esc(entry['scenario'])}</h3>",
        f"<p><strong>{esc(reference)}</strong></p>" if reference else "",
        f"<p>Per soil unit a multiplier on {esc(entry['parameter'])}, searched on "
        f"{esc(entry['search'])}, keeping the flagged share (FS &lt; 1) at or below "
        f"{_pct(entry['max_flagged_share'])}, to maximise the success AUC on the training "
        "landslides; the prediction AUC on the held-out ones shows whether the fit carries "
        f"over. Calibrated soil table: <code>{esc(entry['soil_table'])}</code> (the input is "
        "left as it was). A calibrated value is a screening estimate, not a design "
        "strength.</p>",
        boxed_table(["soil unit", "before", "multiplier", "after", "note"], rows, wrap_last=True),
        summary,
    ]


def _sensitivity(entry: dict[str, Any], out: Path) -> list[str]:
    head = [
        "soil unit",
        "parameter",
        "low",
        "high",
        "FS low",
        "FS high",
        "class changes (low)",
        "class changes (high)",
    ]
    rows = [
        [
            esc(r["soil_unit"]),
            esc(r["parameter"]),
            num(r["low"]),
            num(r["high"]),
            num(r["fs_low"], ".3f"),
            num(r["fs_high"], ".3f"),
            _pct(r["class_change_low"]),
            _pct(r["class_change_high"]),
        ]
        for r in entry["rows"]
    ]
    return [
        f"<h3>Sensitivity under {esc(entry['scenario'])}</h3>",
        "<p>Per soil unit, FS at the unit's median slope and specific catchment area with one "
        "parameter at its low or high value (mean -/+ 1 standard deviation where the soil "
        "table gives a spread, else -/+ 20%), the others as in the table; and the share of "
        "the unit's mapped area whose FS class changes. The widest bars point to the field "
        "or lab test that would most improve the map.</p>",
        embedded_image(out / entry["figure"], "sensitivity tornado"),
        boxed_table(head, rows, left=2),
    ]
