"""The map palette and relief shading (numpy only; no figure is drawn here).

Our own palette, least stable first: a deep violet that draws the eye, a rust orange, a
sand and a near-white that recedes; no data is a neutral grey. Lightness rises
monotonically from the least to the most stable class (CIELAB L* 25, 53, 82, 95), so the
order reads in greyscale too, and no pair of the five colours comes closer than 18
CAM02-UCS units under a full deuteranopia, protanopia or tritanopia simulation (tested with
colorspacious). It is deliberately not a red-yellow-green ramp.

Relief is drawn by shifting CIELAB lightness only: a* and b* (so hue and chroma) stay
those of the legend colour, and a class keeps its colour on the lit and the shaded side of
a valley.
"""

from __future__ import annotations

import numpy as np

# class colours for up to four classes, least stable first; more classes interpolate
CLASS_HEX: tuple[str, ...] = ("#5a1a78", "#c8622b", "#e8c97e", "#f2f2ef")
NO_DATA_HEX = "#8c8c8c"
# special codes of continuous maps: "fails even when dry" and "holds even when saturated"
FAILS_DRY_HEX = "#24092f"
HOLDS_HEX = "#cfe0ee"
# storm time to failure: fails before the storm; at least 32 CAM02-UCS units from every
# colour of the ramp, the no-data grey and HOLDS_HEX, with or without simulated deficiencies
FAILS_BEFORE_HEX = "#000000"
PARTIAL_HEX = "#a9b89a"  # ratio map: within the design-rainfall table in one scenario only
NO_RAIN_HEX = "#f4f6f8"  # return-period map: no rain starts failure (paler than HOLDS_HEX)
RELIEF_LIGHTNESS = 8.0  # L* shift at full light or full shade (of 100)

# sRGB (IEC 61966-2-1) to CIE XYZ, D65 white
_M = np.array(
    [
        [0.4124564, 0.3575761, 0.1804375],
        [0.2126729, 0.7151522, 0.0721750],
        [0.0193339, 0.1191920, 0.9503041],
    ]
)
_WHITE = _M.sum(axis=1)
_EPS, _KAPPA = 216 / 24389, 24389 / 27  # CIE 1976 constants


def hex_rgb(code: str) -> np.ndarray:
    """'#rrggbb' -> RGB in [0, 1].

    >>> hex_rgb("#ff8000").round(3).tolist()
    [1.0, 0.502, 0.0]
    """
    return np.array([int(code[i : i + 2], 16) for i in (1, 3, 5)], dtype=float) / 255.0


def class_rgb(n_classes: int) -> np.ndarray:
    """(n, 3) RGB in [0, 1], least stable first; n != 4 interpolates in CIELAB."""
    base = np.array([hex_rgb(h) for h in CLASS_HEX])
    if n_classes == len(base):
        return base
    lab = srgb_to_lab(base)
    at = np.linspace(0.0, len(base) - 1.0, n_classes)
    out = np.stack([np.interp(at, np.arange(len(base)), lab[:, k]) for k in range(3)], axis=1)
    return lab_to_srgb(out)


def srgb_to_lab(rgb: np.ndarray) -> np.ndarray:
    """sRGB in [0, 1] (..., 3) -> CIELAB (D65), the CIE 1976 formulas."""
    c = np.asarray(rgb, dtype=float)
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    xyz = lin @ _M.T / _WHITE
    f = np.where(xyz > _EPS, np.cbrt(xyz), (_KAPPA * xyz + 16.0) / 116.0)
    return np.stack(
        [
            116.0 * f[..., 1] - 16.0,
            500.0 * (f[..., 0] - f[..., 1]),
            200.0 * (f[..., 1] - f[..., 2]),
        ],
        axis=-1,
    )


def lab_to_srgb(lab: np.ndarray) -> np.ndarray:
    """CIELAB (D65) -> sRGB in [0, 1], clipped to the gamut."""
    lab = np.asarray(lab, dtype=float)
    fy = (lab[..., 0] + 16.0) / 116.0
    f = np.stack([fy + lab[..., 1] / 500.0, fy, fy - lab[..., 2] / 200.0], axis=-1)
    xyz = np.where(f**3 > _EPS, f**3, (116.0 * f - 16.0) / _KAPPA) * _WHITE
    lin = np.clip(xyz @ np.linalg.inv(_M).T, 0.0, 1.0)
    return np.where(lin <= 0.0031308, 12.92 * lin, 1.055 * lin ** (1 / 2.4) - 0.055)


def shade(rgb: np.ndarray, relief: np.ndarray, amount: float = RELIEF_LIGHTNESS) -> np.ndarray:
    """Colours (..., 3) with their CIELAB lightness moved by the relief, hue kept.

    ``relief`` is in [-1, 1] (0 = flat ground, 1 = facing the light, -1 = in full shade;
    see :func:`relief_from_hillshade`): L* moves by ``amount * relief``; a* and b* are
    unchanged.

    >>> flat = shade(hex_rgb("#c8622b")[None], np.array([0.0]))
    >>> bool(np.allclose(flat, hex_rgb("#c8622b"), atol=1e-6))
    True
    """
    lab = srgb_to_lab(rgb)
    shift = amount * np.asarray(relief, dtype=float)
    lab[..., 0] = np.clip(lab[..., 0] + shift, 0.0, 100.0)
    return lab_to_srgb(lab)


def relief_from_hillshade(hillshade: np.ndarray, altitude_deg: float = 45.0) -> np.ndarray:
    """Relief in [-1, 1] from a uint8 hillshade (1-255, 0 no data): 0 where the ground is
    flat (brightness 1 + 254 sin(altitude)), saturating 100 brightness steps either side."""
    flat = 1.0 + 254.0 * np.sin(np.radians(altitude_deg))
    return np.clip((np.asarray(hillshade, dtype=float) - flat) / 100.0, -1.0, 1.0)


def ramp(n: int = 256) -> np.ndarray:
    """(n, 3) sequential ramp in CIELAB from the least stable colour to a near-white,
    through the class colours: for continuous maps where low values are the worry."""
    stops = srgb_to_lab(np.array([hex_rgb(h) for h in (*CLASS_HEX[:3], "#faf8f0")]))
    at = np.linspace(0.0, len(stops) - 1.0, n)
    lab = np.stack([np.interp(at, np.arange(len(stops)), stops[:, k]) for k in range(3)], axis=1)
    return lab_to_srgb(lab)


def unit_rgb(n_units: int) -> np.ndarray:
    """(n, 3) muted qualitative colours for soil units: hues evenly around the CIELAB
    circle at moderate chroma, lightness alternating 80 / 68 so neighbours in the list
    differ in lightness too; no unit colour is as dark as the least stable class."""
    i = np.arange(n_units)
    hue = np.radians(20.0 + 360.0 * i / max(n_units, 1))
    lab = np.stack([np.where(i % 2, 68.0, 80.0), 32 * np.cos(hue), 32 * np.sin(hue)], axis=1)
    return lab_to_srgb(lab)
