"""The physics core must import with numpy and the standard library only."""

import subprocess
import sys

HEAVY = (
    "rasterio",
    "geopandas",
    "matplotlib",
    "scipy",
    "pandas",
    "xlwings",
    "shapely",
    "pyproj",
    "numba",
    "tqdm",
)


def test_core_pulls_in_no_heavy_packages():
    code = (
        "import sys, slopescreen, slopescreen.ranges, slopescreen.maps.io.textfiles, "
        "slopescreen.storm, "
        "slopescreen.validation, slopescreen.back_analysis, slopescreen.sensitivity, "
        "slopescreen.rain_thresholds, slopescreen.rainfall_frequency; "
        "print(','.join(sorted({m.split('.')[0] for m in sys.modules})))"
    )
    loaded = (
        subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        .stdout.strip()
        .split(",")
    )
    assert "numpy" in loaded
    assert not set(HEAVY) & set(loaded)


def test_shell_help_is_light():
    code = (
        "import sys; from slopescreen.cli.main import build_parser; build_parser(); "
        "print(','.join(sorted({m.split('.')[0] for m in sys.modules})))"
    )
    loaded = (
        subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        .stdout.strip()
        .split(",")
    )
    assert not set(HEAVY) & set(loaded)
