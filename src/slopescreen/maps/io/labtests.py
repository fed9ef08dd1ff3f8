"""Reading laboratory shear-test results from CSV (I/O edge, standard library + numpy).

Triaxial file columns (header names, case-insensitive, stresses in kPa):

- ``sigma3_kpa``: cell (minor principal) stress at failure, required;
- ``sigma1_kpa`` or ``deviator_kpa`` (sigma1 - sigma3): one of the two, required;
- ``pore_pressure_kpa``: pore pressure at failure, optional (blank = 0);
- ``specimen``: a label, optional.

Direct-shear file columns: ``normal_kpa`` and ``shear_kpa`` (at failure), optional
``specimen``. Blank lines and lines starting with ``#`` are skipped.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from slopescreen.errors import InputError
from slopescreen.maps.io.textfiles import read_csv_table


@dataclass(frozen=True)
class LabTests:
    """Tests read from one file; ``kind`` is "triaxial" or "direct_shear"."""

    kind: str
    labels: list[str]
    columns: dict[str, np.ndarray]
    lines: list[int]  # the file line of each test


def _number(path: Path, line: int, column: str, text: str, *, allow_blank: bool) -> float:
    text = text.strip()
    if not text:
        if allow_blank:
            return 0.0
        raise InputError(
            f"{path}: line {line}, column {column}: empty cell, a number in kPa is required"
        )
    try:
        value = float(text)
    except ValueError:
        raise InputError(
            f"{path}: line {line}, column {column}: {text!r} is not a number"
        ) from None
    if not np.isfinite(value):
        raise InputError(f"{path}: line {line}, column {column}: {text!r} is not a finite number")
    return value


def read_lab_tests(path: str | Path) -> LabTests:
    """Read a triaxial or direct-shear CSV; raise InputError naming file, line and column."""
    path = Path(path)
    numbered, _ = read_csv_table(path, "lab-test file")
    if not numbered:
        raise InputError(f"{path}: no header row found")
    header_line, header = numbered[0]
    names = [h.strip().lower() for h in header]
    triaxial = {"sigma3_kpa", "sigma1_kpa", "deviator_kpa"} & set(names)
    shear = {"normal_kpa", "shear_kpa"} & set(names)
    if triaxial and shear:
        raise InputError(
            f"{path}: line {header_line}: header mixes triaxial ({', '.join(sorted(triaxial))}) "
            f"and direct-shear ({', '.join(sorted(shear))}) columns; give one kind per file"
        )
    if "sigma3_kpa" in names:
        kind = "triaxial"
        if "sigma1_kpa" not in names and "deviator_kpa" not in names:
            raise InputError(f"{path}: needs a column sigma1_kpa or deviator_kpa beside sigma3_kpa")
        wanted = ["sigma3_kpa", "sigma1_kpa" if "sigma1_kpa" in names else "deviator_kpa"]
        optional = ["pore_pressure_kpa"]
    elif "normal_kpa" in names:
        kind = "direct_shear"
        if "shear_kpa" not in names:
            raise InputError(f"{path}: needs a column shear_kpa beside normal_kpa")
        wanted, optional = ["normal_kpa", "shear_kpa"], []
    else:
        raise InputError(
            f"{path}: line {header_line}: header must name sigma3_kpa with "
            "sigma1_kpa or deviator_kpa (triaxial), or normal_kpa and shear_kpa "
            f"(direct shear); none of its {len(names)} columns is one of these"
        )
    values: dict[str, list[float]] = {c: [] for c in wanted + [c for c in optional if c in names]}
    labels: list[str] = []
    lines: list[int] = []
    for line, row in numbered[1:]:
        lines.append(line)
        cells = dict(zip(names, row, strict=False))
        for column in values:
            cell = cells.get(column, "")
            value = _number(path, line, column, cell, allow_blank=column in optional)
            if value < 0.0 and column != "pore_pressure_kpa":
                raise InputError(
                    f"{path}: line {line}, column {column}: {value:g} kPa is "
                    "negative; stresses must be >= 0 kPa"
                )
            values[column].append(value)
        labels.append(cells.get("specimen", "").strip() or f"test {len(labels) + 1}")
    if len(labels) < 2:
        raise InputError(
            f"{path}: at least 2 tests are needed to fit an envelope, found {len(labels)}"
        )
    columns = {k: np.array(v) for k, v in values.items()}
    if "deviator_kpa" in columns:
        columns["sigma1_kpa"] = columns["sigma3_kpa"] + columns.pop("deviator_kpa")
    for i, label in enumerate(labels):  # name the test, not only the rule
        s3 = columns.get("sigma3_kpa")
        if s3 is None:
            break
        u = columns.get("pore_pressure_kpa", np.zeros_like(s3))[i]
        if u > s3[i]:
            raise InputError(
                f"{path}: line {lines[i]}, specimen {label}: pore_pressure_kpa {u:g} exceeds "
                f"sigma3_kpa {s3[i]:g} (effective confining stress must be >= 0)"
            )
        if columns["sigma1_kpa"][i] < s3[i]:
            raise InputError(
                f"{path}: line {lines[i]}, specimen {label}: sigma1_kpa "
                f"{columns['sigma1_kpa'][i]:g} is below sigma3_kpa {s3[i]:g} (sigma1 >= sigma3)"
            )
    return LabTests(kind, labels, columns, lines)


FIGURE_SUFFIXES = (".png", ".pdf", ".svg", ".jpg", ".jpeg")


def check_figure_path(plot: Path) -> None:
    """InputError unless the figure's name ends in a format the figure can be saved in."""
    if plot.suffix.lower() not in FIGURE_SUFFIXES:
        raise InputError(f"--plot {plot}: name the figure with one of {', '.join(FIGURE_SUFFIXES)}")


def fit_file(path: Path, plot: Path | None = None):
    """Read, fit and (optionally) plot one lab-test file."""
    from slopescreen.envelope import fit_direct_shear, fit_envelope

    if plot is not None:
        check_figure_path(plot)
    tests = read_lab_tests(path)
    cols = tests.columns
    if tests.kind == "triaxial":
        u = cols.get("pore_pressure_kpa")
        fit = fit_envelope(cols["sigma3_kpa"], cols["sigma1_kpa"], u)
    else:
        fit = fit_direct_shear(cols["normal_kpa"], cols["shear_kpa"])
    if plot is not None:
        if tests.kind == "triaxial":
            from slopescreen.maps.outputs.mohr_plot import plot_mohr_circles

            u = cols.get("pore_pressure_kpa", 0.0)
            plot_mohr_circles(
                cols["sigma3_kpa"] - u,
                cols["sigma1_kpa"] - u,
                fit,
                plot,
                tests.labels,
                title=f"Mohr circles at failure: {path.name}",
            )
        else:
            from slopescreen.maps.outputs.mohr_plot import plot_direct_shear

            plot_direct_shear(
                cols["normal_kpa"],
                cols["shear_kpa"],
                fit,
                plot,
                title=f"Direct-shear envelope: {path.name}",
            )
    return tests, fit
