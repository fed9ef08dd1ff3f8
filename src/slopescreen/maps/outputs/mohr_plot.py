"""Mohr-circle figure with a fitted envelope (matplotlib, I/O edge)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from slopescreen.envelope import EnvelopeFit
from slopescreen.maps.io.safe_writes import replacing
from slopescreen.maps.outputs.figure_text import fit_text
from slopescreen.strength import failure_plane_stresses, mohr_circle


def plot_mohr_circles(
    sigma3_eff_kpa: np.ndarray,
    sigma1_eff_kpa: np.ndarray,
    fit: EnvelopeFit,
    target: str | Path,
    labels: list[str] | None = None,
    title: str = "Mohr circles at failure",
) -> Path:
    """Draw effective-stress Mohr circles, the fitted envelope and failure points to PNG."""
    plt = _pyplot()
    s3 = np.asarray(sigma3_eff_kpa, float)
    s1 = np.asarray(sigma1_eff_kpa, float)
    centre, radius = (np.atleast_1d(v) for v in mohr_circle(s1, s3))
    fig, ax = plt.subplots(figsize=(8, 5), dpi=110)
    theta = np.linspace(0.0, np.pi, 181)
    colours = plt.get_cmap("viridis")(np.linspace(0.1, 0.85, len(s3)))
    friction = max(fit.friction_deg, 0.0)
    normal_f, shear_f = failure_plane_stresses(s1, s3, friction)
    for i, (c, r) in enumerate(zip(centre, radius, strict=True)):
        label = labels[i] if labels else f"test {i + 1}"
        ax.plot(
            c + r * np.cos(theta),
            r * np.sin(theta),
            color=colours[i],
            label=f"{label}: σ3' = {s3[i]:.0f}, σ1' = {s1[i]:.0f} kPa",
        )
    ax.plot(
        np.atleast_1d(normal_f),
        np.atleast_1d(shear_f),
        "k.",
        ms=6,
        label="stresses on the failure plane",
    )
    ax.set_aspect("equal")
    ax.set_ylim(0.0, float(np.max(radius)) * 1.35 + max(fit.cohesion_kpa, 0.0))
    return _finish(fig, ax, fit, float(np.max(s1)) * 1.05, title, target)


def plot_direct_shear(
    normal_kpa: np.ndarray,
    shear_kpa: np.ndarray,
    fit: EnvelopeFit,
    target: str | Path,
    title: str = "Direct-shear envelope",
) -> Path:
    """Draw direct-shear failure points and the fitted envelope to PNG."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7, 5), dpi=110)
    ax.plot(
        normal_kpa, shear_kpa, "o", color=plt.get_cmap("viridis")(0.3), label="tests at failure"
    )
    ax.set_ylim(0.0, float(np.max(shear_kpa)) * 1.3)
    return _finish(fig, ax, fit, float(np.max(normal_kpa)) * 1.1, title, target)


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _finish(fig, ax, fit: EnvelopeFit, sigma_max: float, title: str, target: str | Path) -> Path:
    """Envelope line, labels, caution footer; save atomically as PNG."""
    sigma = np.linspace(0.0, sigma_max, 50)
    tau = fit.cohesion_kpa + sigma * np.tan(np.radians(fit.friction_deg))
    ax.plot(
        sigma,
        tau,
        "k--",
        label=f"fit: c' = {fit.cohesion_kpa:.1f} ± {fit.cohesion_se_kpa:.1f} kPa, "
        f"φ' = {fit.friction_deg:.1f} ± {fit.friction_se_deg:.1f}°",
    )
    ax.set_xlabel("effective normal stress σ' (kPa)")
    ax.set_ylabel("shear stress τ (kPa)")
    ax.set_title(title)
    ax.set_xlim(0.0, sigma_max)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="upper left")
    from slopescreen.cautions import CAUTIONS

    fit_text(fig, 0.01, 0.01, "CAUTION: " + " ".join(CAUTIONS), fontsize=6, color="0.3")
    fig.tight_layout(rect=(0, 0.07, 1, 1))
    with replacing(target) as tmp:
        fig.savefig(tmp, format="png")
    fig.clf()
    _pyplot().close(fig)
    return Path(target)
