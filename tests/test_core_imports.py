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
        "slopescreen.rain_thresholds, slopescreen.rainfall_frequency, "
        "slopescreen.maps.terrain.slope, slopescreen.rain_history, slopescreen.design_storm, "
        "slopescreen.soil_depth, slopescreen.root_cohesion, slopescreen.runout; "
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


MOVED = {  # old public path: (new path, a name it holds)
    "slopescreen.terrain": ("slopescreen.maps.terrain.slope", "slope_deg"),
    "slopescreen.routing": ("slopescreen.maps.terrain.routing", "route"),
    "slopescreen.flow_kernels": ("slopescreen.maps.terrain.flow_kernels", "fill_tile"),
    "slopescreen.textfiles": ("slopescreen.maps.io.textfiles", "read_text"),
    "slopescreen.labtests": ("slopescreen.maps.io.labtests", "read_lab_tests"),
    "slopescreen.outputs": ("slopescreen.maps.io.safe_writes", "replacing"),
    "slopescreen.mohr_plot": ("slopescreen.maps.outputs.mohr_plot", "plot_mohr_circles"),
}


def test_moved_modules_keep_their_old_path_for_one_release():
    # each old path still hands over the very same objects, and says where they went
    code = (
        "import importlib, warnings, json, sys\n"
        f"moved = {MOVED!r}\n"
        "said = {}\n"
        "for old, (new, name) in moved.items():\n"
        "    with warnings.catch_warnings(record=True) as caught:\n"
        "        warnings.simplefilter('always')\n"
        "        same = getattr(importlib.import_module(old), name) is getattr(\n"
        "            importlib.import_module(new), name)\n"
        "    said[old] = [same, [str(w.message) for w in caught\n"
        "                        if issubclass(w.category, DeprecationWarning)]]\n"
        "print(json.dumps(said))\n"
    )
    import json

    said = json.loads(
        subprocess.run(
            [sys.executable, "-c", code], capture_output=True, text=True, check=True
        ).stdout
    )
    for old, (new, _) in MOVED.items():
        same, messages = said[old]
        assert same, old
        assert any(old in m and new in m for m in messages), (old, messages)
