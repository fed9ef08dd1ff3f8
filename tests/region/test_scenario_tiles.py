"""A tile's arithmetic on plain arrays, without files: read_tile is the only step that opens
one, so FS, classes and area tables can be checked on arrays written here."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from slopescreen.maps.region.config import ReliabilitySpec, Scenario
from slopescreen.maps.region.scenario_tiles import (
    TileInputs,
    area_tables,
    full_rasters,
    mapped_cells,
    tile_values,
)
from slopescreen.maps.region.terrain_cache import NODATA_F32
from slopescreen.maps.region.tile_job import TileJob

UNIT = {  # one soil unit (code 1); code 0 is "no unit"
    "cohesion_kpa": 4.0,
    "friction_deg": 32.0,
    "unit_weight_kn_m3": 18.0,
    "saturated_unit_weight_kn_m3": 18.0,
    "depth_m": 1.2,
    "root_cohesion_kpa": 1.0,
    "hydraulic_conductivity_m_s": 1e-5,
    "transmissivity_m2_day": np.nan,
    "diffusivity_m2_s": np.nan,
}


def _job(saturation: float) -> TileJob:
    unused = Path("never-opened.tif")
    return TileJob(
        grid=None,  # type: ignore[arg-type]  # the arithmetic needs no grid
        scenario=Scenario("s", "", saturation, None, None, 0.0),
        tables={name: np.array([np.nan, value]) for name, value in UNIT.items()},
        spreads={},
        correlations={},
        slope_deg=unused,
        slope_tan=unused,
        sca=unused,
        codes=unused,
        cut_off=unused,
        recharge_cache=None,
        fs_breaks=(1.0, 1.3, 1.5),
        fs_cap=10.0,
        reliability=ReliabilitySpec(),
        n_units=1,
    )


def _infinite_slope_fs(slope_deg, m):
    # infinite slope with seepage parallel to the slope, water table at m z above the
    # plane (Skempton & DeLory 1957; common practice):
    # FS = (c' + (gamma z - m gamma_w z) cos^2(beta) tan(phi')) / (gamma z sin(beta) cos(beta))
    b = np.radians(slope_deg)
    z, g = UNIT["depth_m"], UNIT["unit_weight_kn_m3"]
    c = UNIT["cohesion_kpa"] + UNIT["root_cohesion_kpa"]
    normal = (g * z - m * 9.81 * z) * np.cos(b) ** 2
    return (c + normal * np.tan(np.radians(UNIT["friction_deg"]))) / (g * z * np.sin(b) * np.cos(b))


def test_fs_classes_and_areas_from_arrays():
    slope = np.array([[20.0, 30.0, 40.0], [45.0, 35.0, 0.0]])
    tan = np.tan(np.radians(slope)).astype(np.float32)
    tan[1, 2] = NODATA_F32  # no terrain here
    codes = np.array([[1, 1, 1], [1, 0, 1]], np.uint16)  # (1, 1) has no soil unit
    tile = TileInputs(
        tan=tan,
        sca=np.full(slope.shape, 50.0, np.float32),
        codes=codes,
        cut_off=np.array([[True, False, False], [False, False, False]]),
        cell_area_m2=100.0,
    )
    terrain_ok, valid, missing = mapped_cells(tile)
    assert valid.tolist() == [[True, True, True], [True, False, False]]
    assert missing == 0 and (terrain_ok == valid).all()
    job = _job(saturation=0.5)
    _, values = tile_values(job, tile, valid)
    expected = _infinite_slope_fs(slope[valid], 0.5)
    np.testing.assert_allclose(values["fs"], np.minimum(expected, 10.0), rtol=1e-5)
    # classes: 1 below FS 1, 2 in [1, 1.3), 3 in [1.3, 1.5), 4 from 1.5 (common practice)
    assert values["classes"].tolist() == list(np.digitize(expected, [1.0, 1.3, 1.5]) + 1)
    rasters = full_rasters(values, valid)
    assert rasters["fs"][1, 1] == NODATA_F32 and rasters["classes"][1, 1] == 0
    tables = area_tables(job, tile, valid, rasters)
    # rows: unit code (0: cells not mapped); columns: class (0: no class)
    per_class = np.bincount(values["classes"], minlength=5) * 100.0
    np.testing.assert_array_equal(tables["table"][1], per_class)
    assert tables["table"][0, 0] == 2 * 100.0  # the two cells not mapped
    assert tables["cut_table"][1].sum() == 100.0  # one mapped cell with a cut-off catchment
    assert "pf_table" not in tables  # no spreads, no probability classes


def test_saturation_raster_gaps_are_counted_not_mapped():
    tile = TileInputs(
        tan=np.full((1, 3), 0.5, np.float32),
        sca=np.full((1, 3), 10.0, np.float32),
        codes=np.ones((1, 3), np.uint16),
        cut_off=np.zeros((1, 3), bool),
        cell_area_m2=1.0,
        saturation=np.array([[0.2, np.nan, 1.0]]),
    )
    _, valid, missing = mapped_cells(tile)
    assert valid.tolist() == [[True, False, True]] and missing == 1
