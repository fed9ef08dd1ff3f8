"""Figures of the inventory checks: success- and prediction-rate curves, back-analysed
values per soil unit, and the sensitivity tornado. Each carries the cautions."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from slopescreen.cautions import CAUTIONS
from slopescreen.maps.io.safe_writes import replacing
from slopescreen.maps.outputs.figure_text import fit_text
from slopescreen.maps.outputs.palette import CLASS_HEX

VIOLET, RUST = CLASS_HEX[0], CLASS_HEX[1]  # the house palette's two strongest colours
# curve styles: (score, group) -> (label, colour, line style)
CURVE_STYLE = {
    ("fs", "all"): ("success rate, ranked by FS", VIOLET, "-"),
    ("fs", "test"): ("prediction rate (held out), by FS", VIOLET, "--"),
    ("pf", "all"): ("success rate, ranked by P(FS < 1)", RUST, "-"),
    ("pf", "test"): ("prediction rate (held out), by P(FS < 1)", RUST, "--"),
}


def _pyplot() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _save(fig: Any, target: Path, bottom: float = 0.1) -> Path:
    fit_text(fig, 0.01, 0.01, "CAUTION: " + " ".join(CAUTIONS), fontsize=6, color="0.3")
    fig.tight_layout(rect=(0, bottom, 1, 1))
    with replacing(target) as tmp:
        fig.savefig(tmp, format="png", dpi=110)
    _pyplot().close(fig)
    return Path(target)


def success_rate_figure(target: Path, score: Any, title: str, split_note: str) -> Path:
    """Landslide share against area share, least stable first, with AUC in the legend."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 5.6))
    ax.plot([0, 1], [0, 1], color="0.6", lw=0.8, label="no skill (AUC 0.5)")
    for key, (label, colour, style) in CURVE_STYLE.items():
        gs = score.groups.get(key)
        if gs is None:
            continue
        c = gs.curves
        ax.plot(
            c.area_share,
            c.landslide_share,
            color=colour,
            ls=style,
            lw=1.6,
            label=f"{label}: AUC {c.success_auc:.3f} ({gs.landslides} landslides)",
        )
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    ax.set_aspect("equal")
    ax.set_xlabel("share of the mapped area, least stable first")
    ax.set_ylabel("share of landslide cells")
    import textwrap

    note = textwrap.fill(f"held out {split_note}", 100)
    ax.set_title(f"{title}\n{note}", fontsize=9)
    ax.title.set_fontsize(9)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="lower right")
    return _save(fig, target, 0.08)


def histogram_figure(
    target: Path, per_unit: dict[str, np.ndarray], label: str, title: str, table_value: dict
) -> Path:
    """One histogram per soil unit of the back-analysed values, with the table's value."""
    plt = _pyplot()
    units = [u for u, v in per_unit.items() if v.size]
    n = max(len(units), 1)
    fig, axes = plt.subplots(n, 1, figsize=(6.4, 1.6 + 1.5 * n), squeeze=False)
    for ax, unit in zip(axes[:, 0], units, strict=False):
        values = per_unit[unit]
        ax.hist(values, bins=min(30, max(5, values.size // 3)), color=VIOLET, alpha=0.8, zorder=2)
        q1, med, q3 = np.percentile(values, [25, 50, 75])
        ax.axvline(med, color="k", lw=1.2, label=f"median {med:.3g}")
        ax.axvspan(
            q1, q3, color="0.5", alpha=0.2, zorder=0, label=f"quartiles {q1:.3g} to {q3:.3g}"
        )
        given = table_value.get(unit)
        if given is not None and np.isfinite(given):
            ax.axvline(given, color=RUST, ls="--", lw=1.2, label=f"soil table {given:.3g}")
        ax.set_ylabel(f"{unit}\ncells", fontsize=8)
        ax.legend(fontsize=6, loc="upper right")
        ax.tick_params(labelsize=7)
    if not units:
        axes[0, 0].text(0.5, 0.5, "no landslide cell has a solution", ha="center")
    axes[-1, 0].set_xlabel(label)
    import textwrap

    axes[0, 0].set_title(textwrap.fill(title, 80), fontsize=9)
    return _save(fig, target, 0.08)


def tornado_figure(
    target: Path, units: dict[str, tuple[float, list[tuple[str, float, float, str]]]], title: str
) -> Path:
    """Per soil unit a tornado: FS at each parameter's low and high value (others held),
    the widest bar on top; ``units`` maps unit -> (base FS, [(parameter, FS low, FS high,
    how the range was set)])."""
    plt = _pyplot()
    heights = [max(len(b), 1) for _, b in units.values()]
    fig, axes = plt.subplots(
        len(units),
        1,
        figsize=(7.0, 1.3 + 0.36 * sum(heights) + 0.5 * len(units)),
        squeeze=False,
        gridspec_kw={"height_ratios": [h + 1 for h in heights]},
    )
    for ax, (unit, (base_fs, bars)) in zip(axes[:, 0], units.items(), strict=True):
        bars = sorted(bars, key=lambda b: abs(b[2] - b[1]))
        for i, (_, low, high, _how) in enumerate(bars):
            ax.barh(i, low - base_fs, left=base_fs, color=RUST, height=0.6)
            ax.barh(i, high - base_fs, left=base_fs, color=VIOLET, height=0.6)
            ax.text(
                max(low, high, base_fs), i, f"  {low:.2f} / {high:.2f}", va="center", fontsize=7
            )
        ax.set_yticks(range(len(bars)), [f"{b[0]} ({b[3]})" for b in bars], fontsize=7)
        ax.axvline(base_fs, color="k", lw=1)
        ax.axvline(1.0, color="0.4", ls=":", lw=1)
        ax.set_title(
            f"{unit}: FS {base_fs:.2f} at the unit's median slope and catchment", fontsize=8
        )
        ax.tick_params(axis="x", labelsize=7)
        lo = min([base_fs, 1.0] + [min(b[1], b[2]) for b in bars])
        hi = max([base_fs] + [max(b[1], b[2]) for b in bars])
        pad = 0.05 * (hi - lo) + 0.02
        ax.set_xlim(lo - pad, hi + 0.3 * (hi - lo) + 0.1)
    axes[-1, 0].set_xlabel("FS with the parameter at its low (rust) or high (violet) value")
    fig.suptitle(title, fontsize=10)
    return _save(fig, target, 0.05)


def threshold_figure(
    target: Path,
    durations_h: tuple[float, ...],
    thresholds: dict[str, np.ndarray],
    return_periods_yr: tuple[float, ...],
    intensity_mm_h: np.ndarray,
    title: str,
    design_label: str = "design rainfall",
) -> Path:
    """Intensity-duration thresholds per soil unit (log-log, the usual form of rainfall
    thresholds, e.g. Caine 1980) against the design-rainfall curves of each return period."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7.0, 5.4))
    d = np.asarray(durations_h, float)
    for j, t in enumerate(return_periods_yr):  # every curve drawn has its legend entry
        shade = 0.35 + 0.5 * j / max(len(return_periods_yr) - 1, 1)
        ax.plot(d, intensity_mm_h[:, j], color=str(shade), lw=0.9, ls="--",
                label=f"{design_label}, {t:g} yr")  # fmt: skip
        ax.annotate(
            f"{t:g} yr",
            (d[-1], intensity_mm_h[-1, j]),
            fontsize=6,
            color="0.3",
            xytext=(-3, 3),
            textcoords="offset points",
            ha="right",
            va="bottom",
        )  # inside the frame: fmt: skip
    colours = [VIOLET, RUST, "#8a6d1f", "#1f4e79", "#4d4d4d", "#7b3f61", "#2f6b3f", "#6b5a2f"]
    not_drawn = []
    for i, (label, values) in enumerate(thresholds.items()):
        ok = values > 0
        colour = colours[(i // 2) % len(colours)]  # a unit's median and steep curves alike
        style = "-" if i % 2 == 0 else ":"
        if ok.any():
            ax.plot(d[ok], values[ok], color=colour, lw=2.0, ls=style, marker="o", ms=3,
                    label=label)  # fmt: skip
        else:
            why = "fails before rain" if (values == -1).any() else "no rain up to K_z fails it"
            not_drawn.append(f"{label}: {why}")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("storm duration (h)")
    ax.set_ylabel("rain intensity (mm/h)")
    import textwrap

    ax.set_title(textwrap.fill(title, 90), fontsize=9)
    ax.grid(alpha=0.3, which="both")
    ax.legend(fontsize=6, loc="upper left", bbox_to_anchor=(1.08, 1.0))
    if not_drawn:  # curves that do not exist are said beside the legend, not drawn
        ax.text(1.08, 0.0, "\n".join(textwrap.fill(x, 48) for x in ["Not drawn:", *not_drawn]),
                transform=ax.transAxes, fontsize=6, color="0.3", va="bottom")  # fmt: skip
    fig.set_size_inches(10.5, 5.6)
    return _save(fig, target, 0.08)


def failing_area_figure(
    target: Path,
    times_h: np.ndarray,
    failed_ha: np.ndarray,
    rain: tuple[np.ndarray, np.ndarray] | None,
    title: str,
) -> Path:
    """The ground area failed (FS first below 1) against time, under the hyetograph (rain
    in steps: each step's end and intensity; None for rain from a raster)."""
    plt = _pyplot()
    fig, (top, bottom) = plt.subplots(
        2, 1, figsize=(9.0, 5.6), sharex=True, gridspec_kw={"height_ratios": [1, 2]}
    )
    if rain is not None:
        ends, steps = rain
        starts = np.concatenate(([0.0], ends[:-1]))
        top.bar(starts, steps, width=ends - starts, align="edge", color="#1f4e79", alpha=0.8)
        top.set_ylabel("rain (mm/h)")
    else:
        top.text(0.5, 0.5, "rain from a raster: varies by cell", ha="center", va="center",
                 transform=top.transAxes, fontsize=8, color="0.3")  # fmt: skip
        top.set_yticks([])
    top.invert_yaxis()  # the hyetograph hangs from the top, as usual
    top.grid(alpha=0.3)
    before, last = float(failed_ha[0]), float(failed_ha[-1])
    bottom.step(times_h, failed_ha, where="post", color=VIOLET, lw=2.0,
                label=f"failed by then: {last:,.2f} ha at the end")  # fmt: skip
    bottom.axhline(before, color="0.35", ls="--", lw=1.0,
                   label=f"already failing before the rain: {before:,.2f} ha")  # fmt: skip
    bottom.set_xlabel("time since the rain began (h)")
    bottom.set_ylabel("ground area failed (ha)")
    bottom.set_xlim(0.0, float(times_h[-1]))
    rise = max(last - before, 1e-6)
    bottom.set_ylim(max(before - 0.15 * rise, 0.0), last + 0.15 * rise)  # the rise, not 0
    bottom.legend(fontsize=7, loc="lower right")
    bottom.grid(alpha=0.3)
    import textwrap

    top.set_title(textwrap.fill(title, 100), fontsize=9)
    return _save(fig, target, bottom=0.06)
