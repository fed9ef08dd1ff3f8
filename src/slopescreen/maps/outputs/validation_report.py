"""The report's section on known landslides, built from the manifest alone (``inventory``,
``back_analysis``, ``calibration``, ``sensitivity``), so a command run after the maps can
rewrite it in place."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from slopescreen.maps.outputs.report import _e, _image, _num, _table


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
        "<h2 id='inventory'>Known landslides: scores, back-analysis, sensitivity</h2>"
        + "\n".join(parts)
    )


def _scores(inv: dict[str, Any], out: Path) -> list[str]:
    parts = [
        f"<p>Scored against <code>{_e(Path(inv['source']).name)}</code>: {inv['landslides']} "
        f"landslides ({_e(inv['kind'])}: {_e(inv['part'])}), {inv['landslide_cells']} cells; "
        f"held out {_e(inv['split_note'])}. The success rate ranks every mapped cell from the "
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
                _e(r["scenario"]),
                _num(r["success_auc"], ".3f"),
                _num(r["prediction_auc"], ".3f"),
                f"{_num(r['roc_auc'], '.3f')} ({_num(r['roc_auc_se'], '.3f')})",
                _num(r["pf_success_auc"], ".3f"),
                _pct(r["flagged_share"]),
                _pct(r["captured_share"]),
                _pct(r["false_alarm_share"]),
            ]
        )
    parts.append(_table(head, rows))
    for r in inv["scenarios"]:
        name = r["scenario"]
        parts.append(f"<h3>{_e(name)}: success and prediction rates</h3>")
        parts.append(_image(out / name / "success_rate.png", f"success rate of {name}"))
        density = [d for d in r["density"] if d["soil_unit"] == "all"]
        parts.append(
            "<p>Landslide density by class (each landslide counted once, in the class of its "
            "least stable cell) and frequency ratio (share of landslide cells / share of "
            "area; above 1: more landslides than the area alone explains).</p>"
            + _table(
                ["class", "area (ha)", "landslides", "per km2", "frequency ratio"],
                [
                    [
                        _e(d["class"]),
                        _num(d["area_ha"], ",.1f"),
                        _e(d["landslides"]),
                        _num(d["landslides_per_km2"], ".3g"),
                        _num(d["frequency_ratio"], ".2f"),
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
            + _table(
                ["soil unit", *classes, "landslides"],
                [
                    [
                        _e(u),
                        *(_num(by[(u, c)]["frequency_ratio"], ".2f") for c in classes),
                        _e(sum(int(by[(u, c)]["landslides"]) for c in classes)),
                    ]
                    for u in units
                ],
            )
        )
    parts += [f"<p class='warn'>{_e(w)}</p>" for w in inv.get("warnings", [])]
    return parts


def _pct(value: object) -> str:
    return _num(100 * float(value), ".1f") + "%" if isinstance(value, int | float) else "-"


def _back_analysis(entry: dict[str, Any], out: Path) -> list[str]:
    rows = [
        [
            _e(u["soil_unit"]),
            _e(u["cells"]),
            _num(u["median"]),
            f"{_num(u['q1'])} to {_num(u['q3'])}",
            _e(u["no_solution"]),
            _num(u["soil_table"]),
        ]
        for u in entry["units"]
    ]
    return [
        f"<h3>Back-analysis: {_e(entry['parameter_label'])} under {_e(entry['scenario'])}</h3>",
        f"<p>For each landslide cell, the value of {_e(entry['parameter_label'])} that brings "
        f"FS to 1 under the scenario's wetness, the other parameters as in the soil table "
        f"({_e(entry['method'])}). Cells with no solution: {_e(entry['no_solution_note'])}. "
        "Medians well away from the table's value question the table, the wetness or the "
        "inventory.</p>",
        _table(["soil unit", "cells", "median", "quartiles", "no solution", "soil table"], rows),
        _image(out / entry["figure"], f"back-analysed {entry['parameter']}"),
    ]


def _calibration(entry: dict[str, Any], out: Path) -> list[str]:
    rows = [
        [
            _e(u["soil_unit"]),
            _num(u["before"]),
            _num(u["multiplier"], ".3g"),
            _num(u["after"]),
            _e(u["note"]),
        ]
        for u in entry["units"]
    ]
    b, a = entry["before"], entry["after"]
    summary = _table(
        ["", "success AUC (training)", "prediction AUC (held out)", "flagged FS < 1"],
        [
            [
                "before",
                _num(b["train_auc"], ".3f"),
                _num(b["test_auc"], ".3f"),
                _pct(b["flagged_share"]),
            ],
            [
                "after",
                _num(a["train_auc"], ".3f"),
                _num(a["test_auc"], ".3f"),
                _pct(a["flagged_share"]),
            ],
        ],
    )
    reference = entry.get("reference")
    return [
        f"<h3>Calibration of {_e(entry['parameter'])} under {_e(entry['scenario'])}</h3>",
        f"<p><strong>{_e(reference)}</strong></p>" if reference else "",
        f"<p>Per soil unit a multiplier on {_e(entry['parameter'])}, searched on "
        f"{_e(entry['search'])}, keeping the flagged share (FS &lt; 1) at or below "
        f"{_pct(entry['max_flagged_share'])}, to maximise the success AUC on the training "
        "landslides; the prediction AUC on the held-out ones shows whether the fit carries "
        f"over. Calibrated soil table: <code>{_e(entry['soil_table'])}</code> (the input is "
        "left as it was). A calibrated value is a screening estimate, not a design "
        "strength.</p>",
        _table(["soil unit", "before", "multiplier", "after", "note"], rows, wrap_last=True),
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
            _e(r["soil_unit"]),
            _e(r["parameter"]),
            _num(r["low"]),
            _num(r["high"]),
            _num(r["fs_low"], ".3f"),
            _num(r["fs_high"], ".3f"),
            _pct(r["class_change_low"]),
            _pct(r["class_change_high"]),
        ]
        for r in entry["rows"]
    ]
    return [
        f"<h3>Sensitivity under {_e(entry['scenario'])}</h3>",
        "<p>Per soil unit, FS at the unit's median slope and specific catchment area with one "
        "parameter at its low or high value (mean -/+ 1 standard deviation where the soil "
        "table gives a spread, else -/+ 20%), the others as in the table; and the share of "
        "the unit's mapped area whose FS class changes. The widest bars point to the field "
        "or lab test that would most improve the map.</p>",
        _image(out / entry["figure"], "sensitivity tornado"),
        _table(head, rows, left=2),
    ]
