"""Benchmark of the site exposure kernel (rfsafe.site.ratio_grid).

Prints the time per million (point, antenna, height) evaluations, its ratio to
a floor, and the peak memory of the process.

Floor (stated): bare numpy ``S = EIRP / (4 pi R^2)`` summed over the same
antennas and heights, on the same points, in blocks of the same size, in the
same run: the least any far-field grid computation must do. The kernel does
more per evaluation (pattern gain toward the point, two environments, worst
configuration per transmitter, worst height, near-field mask); the aim is
within 3x of the floor.

Memory: peak resident set size of the process (resource.getrusage) and the
peak of numpy/Python allocations during the kernel (tracemalloc). The aim is
under 1 GB for a 1000 x 1000 grid, 20 stations and 4 heights.

Usage: python benchmarks/bench_site.py [--n 1000] [--stations 20] [--repeat 3]
"""

from __future__ import annotations

import argparse
import dataclasses
import math
import resource
import time
import tracemalloc

import numpy as np

from rfsafe.antenna.patterns import make_pattern
from rfsafe.site import SiteEmitter, ratio_grid

BEAM = dict(peak_gain_dbi=8.0, front_to_back_db=20.0, beamwidth_h_deg=66.0, beamwidth_v_deg=120.0)
KINDS = [("half-wave-dipole", {}, "horizontal"), ("half-wave-dipole", {}, "vertical"),
         ("quarter-wave-vertical", {}, "vertical"), ("beam", BEAM, "horizontal"),
         ("isotropic", {}, "vertical")]


def stations(n: int, extent_m: float, kinds=KINDS) -> list[SiteEmitter]:
    """``n`` invented stations spread over the grid, cycling through ``kinds``, untilted."""
    rng = np.random.default_rng(7)
    out = []
    for i in range(n):
        kind, kw, pol = kinds[i % len(kinds)]
        out.append(SiteEmitter(
            transmitter=f"tx{i}", configuration="c", x_m=float(rng.uniform(0, extent_m)),
            y_m=float(rng.uniform(0, extent_m)), height_m=float(rng.uniform(3, 12)),
            pattern=make_pattern(kind, **kw), freq_hz=14.2e6, power_w=(100.0, 50.0),
            limit_w_m2=(45.0, 9.0), ground_factor=2.56, azimuth_deg=float(rng.uniform(0, 360)),
            polarisation=pol, near_field_m=3.36))
    return out


def floor_sum(ems, x, y, heights, chunk, dtype=np.float64):
    """S = EIRP / (4 pi R^2), summed over antennas and heights: the stated floor."""
    x, y = x.astype(dtype), y.astype(dtype)
    total = np.empty_like(x)
    for start in range(0, x.size, chunk):
        px, py = x[start:start + chunk], y[start:start + chunk]
        acc = np.zeros_like(px)
        for em in ems:
            eirp, xs, ys = dtype(em.power_w[0] * 1.64), dtype(em.x_m), dtype(em.y_m)
            for h in heights:
                dz2 = dtype((h - em.height_m) ** 2)
                acc += eirp / (dtype(4.0 * math.pi) * ((px - xs) ** 2 + (py - ys) ** 2 + dz2))
        total[start:start + chunk] = acc
    return total


def best_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1000, help="grid points per side (default 1000)")
    ap.add_argument("--stations", type=int, default=20)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--chunk", type=int, default=16384)
    args = ap.parse_args()

    extent = 100.0
    gx = np.linspace(0.0, extent, args.n)
    xx, yy = np.meshgrid(gx, gx)
    x, y = xx.ravel(), yy.ravel()
    heights = (0.5, 1.0, 1.5, 2.0)
    ems = stations(args.stations, extent)
    evals = x.size * len(ems) * len(heights)

    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    tracemalloc.start()
    res = ratio_grid(ems, x, y, heights, chunk_points=args.chunk)
    _, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    assert res.evaluations == evals

    t_kernel = best_time(lambda: ratio_grid(ems, x, y, heights, chunk_points=args.chunk), args.repeat)
    t_floor = best_time(lambda: floor_sum(ems, x, y, heights, args.chunk), args.repeat)
    t_floor32 = best_time(lambda: floor_sum(ems, x, y, heights, args.chunk, np.float32), args.repeat)
    per_m = lambda t: t / evals * 1e6  # noqa: E731  seconds per million evaluations

    print(f"grid {args.n} x {args.n} = {x.size} points, {len(ems)} stations, {len(heights)} heights "
          f"-> {evals / 1e6:.0f} M evaluations (best of {args.repeat})")
    print(f"kernel  ratio_grid           : {t_kernel:7.3f} s  {per_m(t_kernel) * 1e3:6.2f} ms per million evaluations")
    print(f"floor   EIRP/4piR^2 (float64): {t_floor:7.3f} s  {per_m(t_floor) * 1e3:6.2f} ms per million evaluations")
    print(f"floor   EIRP/4piR^2 (float32): {t_floor32:7.3f} s  {per_m(t_floor32) * 1e3:6.2f} ms per million evaluations")
    print(f"ratio kernel/floor: {t_kernel / t_floor:5.2f} against float64, {t_kernel / t_floor32:5.2f} against "
          "float32 (aim <= 3; the kernel's per-height arithmetic is float32)")
    print(f"peak RSS {rss_peak:.0f} MB (before the kernel {rss0:.0f} MB); "
          f"peak traced allocations during the kernel {traced_peak / 2**20:.0f} MB  (aim < 1024 MB)")
    print(f"per pattern kind ({len(ems)} stations of one kind, same grid and heights):")
    for kind in KINDS:
        one = stations(args.stations, extent, [kind])
        tk = best_time(lambda: ratio_grid(one, x, y, heights, chunk_points=args.chunk), args.repeat)
        tf = best_time(lambda: floor_sum(one, x, y, heights, args.chunk), args.repeat)
        print(f"  {kind[0]:22s} {kind[2]:10s} {per_m(tk) * 1e3:6.2f} ms per million  ratio to floor {tk / tf:5.2f}")
    # the whole site analysis (grid, areas, keep-out attribution) on a 100 m site at 0.1 m spacing
    from rfsafe.site import Area, analyse_site

    areas = [Area("path", "public", ((40.0, 0.0), (45.0, 0.0), (45.0, 100.0), (40.0, 100.0))),
             Area("tent", "operators", ((60.0, 60.0), (70.0, 60.0), (70.0, 70.0), (60.0, 70.0)))]
    t0 = time.perf_counter()
    res_site = analyse_site(ems, boundary=((0, 0), (100, 0), (100, 100), (0, 100)), areas=areas,
                            heights_m=heights, grid_spacing_m=0.1)
    t_site = time.perf_counter() - t0
    rss_site = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    g = res_site.grid
    print(f"analyse_site: {g.nx} x {g.ny} = {g.nx * g.ny} points (margin {g.margin_m:g} m), {len(ems)} stations, "
          f"{len(heights)} heights: {t_site:.2f} s; peak RSS of the process now {rss_site:.0f} MB")
    print("general paths (aim: within 4x of the float64 floor):")
    tilted = [dataclasses.replace(em, tilt_deg=5.0) for em in ems]
    tt = best_time(lambda: ratio_grid(tilted, x, y, heights, chunk_points=args.chunk), args.repeat)
    print(f"  tilted antennas (direction per height + pattern gain): {per_m(tt) * 1e3:6.2f} ms per million  "
          f"ratio to floor {tt / t_floor:5.2f}")
    table = _table_pattern()
    tables = [dataclasses.replace(em, pattern=table) for em in ems]
    tb = best_time(lambda: ratio_grid(tables, x, y, heights, chunk_points=args.chunk), args.repeat)
    print(f"  pattern tables, untilted (10 x 5 deg table)          : {per_m(tb) * 1e3:6.2f} ms per million  "
          f"ratio to floor {tb / t_floor:5.2f}")
    tables_t = [dataclasses.replace(em, tilt_deg=5.0) for em in tables]
    tbt = best_time(lambda: ratio_grid(tables_t, x, y, heights, chunk_points=args.chunk), args.repeat)
    print(f"  pattern tables, tilted                               : {per_m(tbt) * 1e3:6.2f} ms per million  "
          f"ratio to floor {tbt / t_floor:5.2f}")


def _table_pattern():
    """An invented 10 x 5 degree pattern table (the size of a typical exported pattern)."""
    from rfsafe.antenna.patterns import PatternTable

    az = np.arange(0.0, 360.0, 10.0)
    el = np.arange(-90.0, 90.1, 5.0)
    A, E = np.meshgrid(np.radians(az), np.radians(el))
    gain = 6.0 * np.cos(A / 2) ** 2 * np.cos(E) - 12.0
    return make_pattern("table", table=PatternTable(azimuth_deg=az, elevation_deg=el, gain_dbi=gain))


if __name__ == "__main__":
    main()
