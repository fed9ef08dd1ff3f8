"""map.html: the maps offline in a real browser (Debian's chromium, headless). The page
loads without console errors, switching layers changes the picture, and a click on a known
cell shows that cell's FS as fs.tif holds it (to the three decimals the page prints)."""

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import rasterio

from slopescreen.maps.outputs import viewer


def _chromium():
    for name in ("chromium", "chromium-browser"):
        if shutil.which(name):
            return shutil.which(name)
    return None


def _browse(page, tmp_path, *args):
    return subprocess.run(
        [_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--enable-logging=stderr", "--v=0",
         "--virtual-time-budget=30000", "--window-size=1400,900", *args, page],
        capture_output=True, text=True, timeout=180,
    )  # fmt: skip


INSTALL = "Debian's chromium is not installed: sudo apt-get install chromium (.ci/run does)"


@pytest.mark.skipif(_chromium() is None, reason=INSTALL)
def test_the_map_page_in_a_real_browser(demo_out, tmp_path):
    out, _ = demo_out
    page = out / "map.html"
    assert page.exists() and page.stat().st_size < 50 * 2**20
    assert "http://" not in page.read_text() and "https://" not in page.read_text()  # offline
    data = json.loads(re.search(r"<script id='data' type='application/json'>(.*?)</script>",
                                page.read_text(), re.S)[1])  # fmt: skip
    step = data["values"]["step"]
    first = data["scenarios"][0]
    with rasterio.open(out / first / "fs.tif") as src:
        fs = src.read(1)
    rows, cols = np.nonzero((fs > 0) & (fs < 5))
    pick = len(rows) // 2
    r, c = (rows[pick] // step) * step, (cols[pick] // step) * step  # a cell the page holds
    if not (0 < fs[r, c] < 1e3):
        r, c = step * 100, step * 100
    done = _browse(page.as_uri() + f"#probe={r},{c}", tmp_path, "--dump-dom")
    assert done.returncode == 0, done.stderr[-2000:]
    # Chromium logs every console message as "...:CONSOLE:<line>] ..." (console.error and
    # uncaught exceptions at INFO level too): the page writes none
    console = [x for x in done.stderr.splitlines() if ":CONSOLE" in x]
    assert not console, console
    found = re.search(r'<pre id="probe">(.*?)</pre>', done.stdout, re.S)
    assert found, "the page did not finish loading"
    probe = json.loads(found[1].replace("&lt;", "<").replace("&gt;", ">").replace("&amp;", "&"))
    assert probe["first"] != probe["second"]  # another layer, another picture
    assert probe["second"] != probe["third"]  # another scenario, another picture
    assert probe["scenarios"] == len(data["scenarios"]) and probe["layers"] >= 3
    shown = probe["shown"]
    assert shown["scenario"] == first
    assert shown["cell"].startswith(f"row {r}, column {c} ")
    assert shown["FS"] == f"{float(fs[r, c]):.3f}"
    # another scenario chosen: the same cell's values in it
    last = data["scenarios"][-1]
    with rasterio.open(out / last / "fs.tif") as src:
        fs_last = float(src.read(1)[r, c])
    assert probe["after"]["scenario"] == last
    assert probe["after"]["FS"] == f"{fs_last:.3f}"
    shot = tmp_path / "map.png"
    done = _browse(page.as_uri(), tmp_path, f"--screenshot={shot}")
    assert done.returncode == 0 and shot.exists()
    from matplotlib.image import imread

    image = imread(shot)[..., :3]
    assert np.unique((image.reshape(-1, 3) * 255).astype(np.uint8), axis=0).shape[0] > 200
    if os.environ.get("SLOPESCREEN_REFRESH_DOCS") == "1":  # the picture README shows
        shutil.copyfile(shot, Path(__file__).resolve().parents[2] / "docs" / "map_page.png")


def test_value_grids_are_every_step_th_cell(tmp_path, monkeypatch):
    # the page's values are the raster's own cells, row 0 and column 0 first, whatever
    # the tiles they are read in (reference: numpy's own strided slicing, z[::step, ::step])
    from region_files import write_raster

    from slopescreen.maps.io import rasters
    from slopescreen.maps.io.grid import read_grid

    z = np.arange(37 * 53, dtype=np.float32).reshape(37, 53)
    write_raster(tmp_path / "v.tif", z)
    grid = read_grid(tmp_path / "v.tif")
    monkeypatch.setattr(rasters, "TILE", 8)
    for step in (1, 3, 4, 7):
        assert np.array_equal(viewer.sampled(tmp_path / "v.tif", grid, step), z[::step, ::step])


def test_the_page_size_is_bounded_by_its_resolution_not_the_region(demo_out, tmp_path,
                                                                   monkeypatch):  # fmt: skip
    # overlays at most VIEW_PIXELS a side, values at most VALUE_PIXELS: the page holds that
    # many pixels whatever the region's size, so halving them shrinks it to about a quarter
    # (a 10^8-cell region writes no more pixels than a 10^6-cell one at the same settings)
    from pathlib import Path

    from slopescreen.maps.io.grid import read_grid
    from slopescreen.maps.region.config import load_config

    out, _ = demo_out
    region = Path(__file__).resolve().parents[2] / "demo_region"
    cfg = load_config(region / "quillbrook_scenarios.toml")
    grid = read_grid(region / "quillbrook_dem.tif")
    manifest = json.loads((out / "manifest.json").read_text())

    class Ran:  # what the page reads of a scenario's summary
        def __init__(self, name):
            self.name, self.hazard_names = name, []

    scenarios = [Ran(s["name"]) for s in manifest["scenarios"][:2]]
    sizes = {}
    for pixels in (400, 200):
        monkeypatch.setattr(viewer, "VIEW_PIXELS", pixels)
        monkeypatch.setattr(viewer, "VALUE_PIXELS", pixels // 2)
        target = tmp_path / f"map{pixels}.html"
        viewer.write_map_page(target, cfg, grid, out, out / "terrain", scenarios,
                              ["a", "b", "c", "d"], ["u"] * 5)  # fmt: skip
        sizes[pixels] = target.stat().st_size
    assert sizes[200] < 0.6 * sizes[400]
