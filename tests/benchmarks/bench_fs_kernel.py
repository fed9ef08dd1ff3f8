"""Benchmark 1: the per-cell factor-of-safety kernel against the memory limit.

Times the map engine's per-cell kernel (slopescreen.maps.region.kernels.fs_by_unit: tan(slope),
unit code and saturation in, FS out, soil parameters looked up by unit) and, in the same
run, ``np.copyto`` of the same number of bytes; prints the ratio (target: at most 3x). Also
the broadcasting kernel used for probabilities (fs_ufunc, all inputs float64) and the numpy
core function for reference.

    python tests/benchmarks/bench_fs_kernel.py [--cells 20000000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _best(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        started = time.perf_counter()
        fn()
        times.append(time.perf_counter() - started)
    return min(times)


def _copy_time(nbytes: int) -> float:
    src = np.ones(nbytes // 8 + 1)
    dst = np.empty_like(src)
    np.copyto(dst, src)
    return _best(lambda: np.copyto(dst, src))


def main() -> None:
    import numba

    from slopescreen import factor_of_safety
    from slopescreen.maps.region.kernels import fs_by_unit, fs_ufunc

    parser = argparse.ArgumentParser()
    parser.add_argument("--cells", type=int, default=20_000_000)
    n = parser.parse_args().cells
    rng = np.random.default_rng(0)
    slope = rng.uniform(0.0, 55.0, n)
    tan32 = np.tan(np.radians(slope)).astype(np.float32)
    codes = rng.integers(1, 6, n).astype(np.uint16)
    m32 = rng.uniform(0.0, 1.0, n).astype(np.float32)
    out = np.empty(n)
    tables = [
        np.array([0, 1.0, 1.2, 1.5, 2.0, 0.6]),
        np.array([0, 4.0, 8.0, 9.0, 0.0, 6.0]),
        np.tan(np.radians([0, 32.0, 34.0, 30.0, 31.0, 35.0])),
        np.full(6, 18.5),
        np.full(6, 20.0),
    ]
    fs_by_unit(tan32[:10], codes[:10], m32[:10], *tables, 0.0, 9.81, out[:10])
    t_kernel = _best(lambda: fs_by_unit(tan32, codes, m32, *tables, 0.0, 9.81, out))
    kernel_bytes = tan32.nbytes + codes.nbytes + m32.nbytes + out.nbytes
    t_copy = _copy_time(kernel_bytes)

    depth, coh, tphi = (
        rng.uniform(0.5, 3.0, n),
        rng.uniform(0.0, 10.0, n),
        np.tan(np.radians(rng.uniform(25.0, 40.0, n))),
    )
    g, gs, m64, tan64 = np.full(n, 18.5), np.full(n, 20.0), m32.astype(float), tan32.astype(float)
    fs_ufunc(tan64[:10], depth[:10], coh[:10], tphi[:10], g[:10], gs[:10], m64[:10], 0.0, 9.81)
    t_ufunc = _best(lambda: fs_ufunc(tan64, depth, coh, tphi, g, gs, m64, 0.0, 9.81, out=out))
    ufunc_bytes = 8 * 8 * n
    t_copy_u = _copy_time(ufunc_bytes)
    k = min(n, 5_000_000)
    t_numpy = (
        _best(
            lambda: factor_of_safety(slope[:k], depth[:k], coh[:k], 30.0, 18.5, m64[:k]), repeat=2
        )
        * n
        / k
    )
    print(
        f"per-cell FS kernel, {n / 1e6:.0f} M cells, {numba.get_num_threads()} threads, best of 5:"
    )
    print(
        f"  engine kernel (lookup by unit)  {t_kernel:7.3f} s  {n / t_kernel / 1e6:7.0f} M "
        f"cells/s; np.copyto of its {kernel_bytes / 1e6:.0f} MB {t_copy:7.3f} s; "
        f"ratio {t_kernel / t_copy:.2f} (target <= 3)"
    )
    print(
        f"  broadcasting kernel (float64)   {t_ufunc:7.3f} s  {n / t_ufunc / 1e6:7.0f} M "
        f"cells/s; np.copyto of its {ufunc_bytes / 1e6:.0f} MB {t_copy_u:7.3f} s; "
        f"ratio {t_ufunc / t_copy_u:.2f} (target <= 3)"
    )
    print(
        f"  numpy core factor_of_safety     {t_numpy:7.3f} s  {n / t_numpy / 1e6:7.0f} M "
        f"cells/s (reference, with input checks)"
    )


if __name__ == "__main__":
    main()
