"""Annual probability of failure of a rainfall scenario's cells where the soil table gives
spreads: rainfall frequency and soil uncertainty together.

The year's storms of every tabulated duration are taken at one return-period level T (the
assumption behind the triggering return period); a cell fails in a year when that level's
storm of some duration reaches the cell's critical intensity for its soil. So

- **Monte Carlo** (``[reliability] method = "monte_carlo"``): for each sample of the soil
  parameters, the critical intensity of every duration (the compiled kernel), the
  triggering return period T_s and its annual probability p(T_s), as the map without
  spreads does; the result is the mean of p(T_s) over the samples: the sum over bands of
  storm level of P(failure | band) x P(band), taken band by band at each sample's own
  level, with no discretisation.
- **Taylor series** (Duncan 2000): at the cell's critical duration D* (the duration whose
  storm triggers at the shortest return period with the mean parameters), the critical
  intensity I_c at the Taylor-series points (where a point fails before rain, I_c = 0;
  where no intensity up to K_z fails it, I_c = K_z: the limits at those boundaries). A
  storm of level T infiltrates at min(i(D*, T), K_z), so its factor of safety on rain is
  I_c / min(i(D*, T), K_z) at each point; its mean and standard deviation give beta as
  for FS (normal or lognormal, ``fs_distribution``) and P(failure | T) = Phi(-beta), at
  least P of failure before any rain (the scenario's ``probability_of_failure``). The
  bands' sum is :func:`slopescreen.rainfall_frequency.annual_probability_over_bands`
  (conservative: at most 2.4% high with 256 bands over 2-1000 years).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from slopescreen import rain_thresholds as rt
from slopescreen import rainfall_frequency as rf
from slopescreen._normal import normal_cdf
from slopescreen.reliability import (
    FS_STAT_CAP,
    moment_reliability_index,
    reliability_monte_carlo,
    taylor_points,
    taylor_scales,
    taylor_sd,
)


def critical_intensities(
    job: Any, block: dict[str, np.ndarray], duration_h: float, **params: Any
) -> np.ndarray:
    """I_c (mm/h, codes -1 and -2) of the block's cells for parameters that may be arrays
    of samples broadcast against the cells (shape: the broadcast shape)."""
    from slopescreen.maps.region.intensity_tables import by_kernel
    from slopescreen.maps.region.tile_job import CORE_FIELDS as names

    # one signature of the compiled kernel for every caller: float64 cells, int64 codes
    shape = np.broadcast_shapes(block["tan"].shape, *(np.shape(params[n]) for n in names))
    flat = {n: np.broadcast_to(np.asarray(params[n], float), shape).ravel() for n in names}
    out = by_kernel(
        job,
        duration_h,
        np.broadcast_to(np.asarray(block["tan"], np.float64), shape).ravel(),
        np.broadcast_to(np.asarray(block["sca"], np.float64), shape).ravel(),
        np.arange(int(np.prod(shape))),  # every cell its own parameters
        flat,
    )
    return out.reshape(shape)


def _design_at(
    log_design: np.ndarray, design: np.ndarray, log_periods: np.ndarray, period_yr: float
) -> np.ndarray:
    """Design intensity (mm/h) at a return period inside the table, the higher of log-log
    and Gumbel-variate interpolation between rows (as the return periods take the shorter:
    :func:`slopescreen.rainfall_frequency.return_period_yr`); ``log_design`` and
    ``design``: (return periods, cells), logged and not."""
    from slopescreen.rainfall_frequency import gumbel_variate

    x = np.log(period_yr)
    k = int(np.clip(np.searchsorted(log_periods, x) - 1, 0, log_periods.size - 2))
    share = (x - log_periods[k]) / (log_periods[k + 1] - log_periods[k])
    log_log = np.exp(log_design[k] + share * (log_design[k + 1] - log_design[k]))
    y = gumbel_variate(np.exp([log_periods[k], x, log_periods[k + 1]]))
    weight = (y[1] - y[0]) / (y[2] - y[0])
    return np.maximum(log_log, design[k] + weight * (design[k + 1] - design[k]))


def annual_probability_with_spread(
    job: Any,
    sub: dict[str, np.ndarray],
    values: dict[str, Any],
    correlations: dict[tuple[str, str], float],
    design: np.ndarray,
    mean_intensity: np.ndarray,
    fails_without_rain: np.ndarray,
) -> np.ndarray:
    """Annual probability of failure of one unit's cells ``sub`` with its spreads in
    ``values`` (see the module docstring). ``design``: intensities (mm/h) of the table,
    (durations, return periods) or per cell (durations, return periods, cells);
    ``mean_intensity``: I_c of each duration at the mean parameters (durations, cells);
    ``fails_without_rain``: P(FS < 1) before the rain (Taylor series)."""
    spec, table, rel = job.scenario.rainfall, job.rainfall, job.reliability
    periods = np.asarray(table.return_periods_yr, float)
    n = sub["tan"].size
    lifted = design * spec.uplift
    per_cell = (
        lifted if lifted.ndim == 3 else np.broadcast_to(lifted[:, :, None], (*lifted.shape, n))
    )

    if rel.method == "monte_carlo":

        def annual(**params: Any) -> np.ndarray:
            found = []
            for row, d in enumerate(table.durations_h):
                ic = critical_intensities(job, sub, d, **params)
                rows = np.broadcast_to(per_cell[row][:, None, :], (periods.size, *ic.shape))
                found.append(rf.return_period_yr(ic.astype(np.float32), periods, rows))
            return rf.annual_probability(
                rf.triggering_return_period_yr(found), periods[0], table.series, periods[-1]
            )

        res = reliability_monte_carlo(  # the cells' slopes give the samples their shape
            annual,
            values | {"tan_slope": sub["tan"]},
            correlations,
            samples=rel.samples,
            random_state=rel.random_state,
        )
        return res.fs_mean  # the mean of p(T_s) over the samples

    # Taylor series at each cell's critical duration D*: the largest ratio of the longest
    # tabulated storm to the critical intensity (the shortest return period)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(mean_intensity > 0.0, per_cell[:, -1, :] / mean_intensity, -np.inf)
    critical = np.argmax(ratio, axis=0)
    points = taylor_points(values, correlations)
    scales = taylor_scales(values, correlations)
    by_duration = [  # (duration, its cells, the block at them) for durations that are D*
        (d, cells, {k: v[cells] for k, v in sub.items()})
        for row, d in enumerate(table.durations_h)
        if (cells := critical == row).any()
    ]
    capacity, conductivity = {}, {}
    for key, params in points.items():
        ic = np.empty(n)
        for d, cells, part in by_duration:  # per-cell values at those cells
            at = {k: v[..., cells] if np.shape(v)[-1:] == (n,) else v for k, v in params.items()}
            ic[cells] = critical_intensities(job, part, d, **at)
        k_mm_h = np.broadcast_to(params["hydraulic_conductivity_m_s"], (n,)) * 3.6e6
        # the codes at their limits: failure before rain is I_c -> 0; no intensity up to
        # K_z failing is I_c = K_z, where rain of any strength infiltrates at K_z at most
        ic = np.where(ic == rt.FAILS_WITHOUT_RAIN, 0.0, ic)
        capacity[key] = np.where(ic == rt.NO_INTENSITY_FAILS, k_mm_h, ic)
        conductivity[key] = k_mm_h
    design_at_critical = np.take_along_axis(per_cell, critical[None, None, :], axis=0)[0]
    log_design = np.log(design_at_critical)
    log_periods = np.log(periods)
    dry = np.asarray(fails_without_rain, float)

    def triggered_by(period_yr: float) -> np.ndarray:
        storm = _design_at(log_design, design_at_critical, log_periods, period_yr)
        fs = {
            key: np.minimum(capacity[key] / np.minimum(storm, conductivity[key]), FS_STAT_CAP)
            for key in points
        }
        beta = moment_reliability_index(
            fs[None], taylor_sd(fs, correlations, scales), rel.fs_distribution
        )
        return np.maximum(normal_cdf(-beta), dry)

    edges = rf.band_edges(periods[0], periods[-1])
    return rf.annual_probability_over_bands(triggered_by, dry, edges, table.series)
