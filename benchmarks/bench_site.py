"""Benchmark of the site exposure kernel (rfsafe.site.ratio_grid).

Prints the CPU time per million (point, antenna, height) evaluations of each kernel path, its ratio to
a floor, and the peak memory of the process and of ``--csv`` writing.

Floor (stated): bare numpy ``S = EIRP / (4 pi R^2)`` in float64, written as the formula reads (R^2 from
the point's offsets at each height), summed over the same antennas and heights, on the same points, in
blocks of the same size, in the same run. It is not the least a grid computation can do: with the
horizontal distance found once per antenna and block (``floor_hoisted``) the same sum takes less time;
that ratio is printed too, so that the aims can be read against either. The kernel does more per
evaluation (distance to the nearest part of each
antenna's structure, pattern gain toward the point, near-field peak gain, two environments, worst
configuration per transmitter, worst height); the aims are within 3x of the floor for the standard
paths and within 4x for pattern tables and tilted antennas. Every path is timed twice: with each
antenna's textbook structure (as a site review runs it; distances to the nearest part) and as a point
at its centre (the difference is the cost of the nearest-part distance). The pattern tables' single-precision
lookup is raised by a bound of its rounding: the relative excess over the far-field prediction written out
in float64 (patterns.table_gain) is printed, never below 0.

Times are CPU time of this process (time.process_time), median of ``--repeat`` runs, each kernel run
paired with a floor run right after it (the machine may be shared: the ratio of medians of paired runs
is what is compared).

Points: a regular grid, as the site review passes them (the kernel detects it and takes whole rows); the mixed
kinds are timed once more on the same points in random order, where it cannot (printed for information).

Memory: peak resident set size (resource.getrusage) and the peak of numpy/Python allocations during the
kernel (tracemalloc); the aim is under 1 GB for a 1000 x 1000 grid, 20 stations and 4 heights. ``--csv``
of the demo site review is written by a child process at two grid spacings: the peak of allocations
while writing (tracemalloc), beyond the grid's own arrays, must not grow with the grid (streamed).

Usage: python benchmarks/bench_site.py [--n 1000] [--stations 20] [--repeat 5]
"""

from __future__ import annotations

import argparse
import dataclasses
import math
import resource
import statistics
import subprocess
import sys
import time
import tracemalloc

import numpy as np

from rfsafe.antenna.patterns import make_pattern
from rfsafe.site import SiteEmitter, ratio_grid

BEAM = dict(peak_gain_dbi=8.0, front_to_back_db=20.0, beamwidth_h_deg=66.0, beamwidth_v_deg=120.0)
KINDS = [("half-wave-dipole", {}, "horizontal"), ("half-wave-dipole", {}, "vertical"),
         ("quarter-wave-vertical", {}, "vertical"), ("beam", BEAM, "horizontal"),
         ("isotropic", {}, "vertical")]


def _extent(kind: str, kw: dict, pol: str, height_m: float, azimuth_deg: float, tilt_deg: float, freq_hz: float):
    """The textbook structure of ``kind`` relative to its centre (as rfsafe.site.assess gives the kernel)."""
    from rfsafe.antenna.extent import antenna_extent, shifted
    from rfsafe.station.schema import Antenna

    gain = {"gain_dbi": kw["peak_gain_dbi"]} if kind == "beam" else {}
    if kind == "beam":
        gain.update(front_to_back_db=kw["front_to_back_db"], beamwidth_h_deg=kw["beamwidth_h_deg"],
                    beamwidth_v_deg=kw["beamwidth_v_deg"])
    ant = Antenna(id="a", kind=kind if kind != "table" else "other", height_m=height_m, azimuth_deg=azimuth_deg,
                  tilt_deg=tilt_deg, polarisation=pol, **gain)
    return shifted(antenna_extent(ant, freq_hz), (0.0, 0.0, -height_m))


def stations(n: int, extent_m: float, kinds=KINDS, *, structure: bool = True, tilt_deg: float = 0.0,
             pattern=None) -> list[SiteEmitter]:
    """``n`` invented stations spread over the grid, cycling through ``kinds``.

    ``structure``: give each its textbook structure (nearest-part distances) or none (a point).
    ``pattern``: replace every pattern (a table), keeping the kind's structure.
    """
    rng = np.random.default_rng(7)
    out = []
    for i in range(n):
        kind, kw, pol = kinds[i % len(kinds)]
        x, y = float(rng.uniform(0, extent_m)), float(rng.uniform(0, extent_m))
        h, az = float(rng.uniform(3, 12)), float(rng.uniform(0, 360))
        out.append(SiteEmitter(
            transmitter=f"tx{i}", configuration="c", x_m=x, y_m=y, height_m=h,
            pattern=pattern or make_pattern(kind, **kw), freq_hz=14.2e6, power_w=(100.0, 50.0),
            limit_w_m2=(45.0, 9.0), ground_factor=2.56, azimuth_deg=az, tilt_deg=tilt_deg,
            polarisation=pol, near_field_m=3.36,
            extent=_extent(kind, kw, pol, h, az, tilt_deg, 14.2e6) if structure else None))
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


def floor_hoisted(ems, x, y, heights, chunk):
    """The stated floor's sum with the horizontal distance found once per antenna and block (float64)."""
    total = np.empty_like(x)
    for start in range(0, x.size, chunk):
        px, py = x[start:start + chunk], y[start:start + chunk]
        acc = np.zeros_like(px)
        t = np.empty_like(px)
        for em in ems:
            rho2 = px - em.x_m
            rho2 *= rho2
            dy = py - em.y_m
            dy *= dy
            rho2 += dy
            k = em.power_w[0] * 1.64 / (4.0 * math.pi)
            for h in heights:
                np.add(rho2, (h - em.height_m) ** 2, out=t)
                np.divide(k, t, out=t)
                acc += t
        total[start:start + chunk] = acc
    return total


def paired(kernel, floor, repeat):
    """Median CPU seconds of ``kernel`` and ``floor`` over ``repeat`` paired runs, and the median ratio."""
    tk, tf = [], []
    for _ in range(repeat):
        t0 = time.process_time()
        kernel()
        t1 = time.process_time()
        floor()
        t2 = time.process_time()
        tk.append(t1 - t0)
        tf.append(t2 - t1)
    return statistics.median(tk), statistics.median(tf), statistics.median(a / b for a, b in zip(tk, tf))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1000, help="grid points per side (default 1000)")
    ap.add_argument("--stations", type=int, default=20)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--chunk", type=int, default=16384)
    ap.add_argument("--no-csv", action="store_true", help="skip the --csv memory measurement")
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
    per_m = lambda t: t / evals * 1e6 * 1e3  # noqa: E731  CPU ms per million evaluations

    def run(ems_):
        return lambda: ratio_grid(ems_, x, y, heights, chunk_points=args.chunk)

    floor = lambda: floor_sum(ems, x, y, heights, args.chunk)  # noqa: E731
    floor32 = lambda: floor_sum(ems, x, y, heights, args.chunk, np.float32)  # noqa: E731
    hoisted = lambda: floor_hoisted(ems, x, y, heights, args.chunk)  # noqa: E731
    print(f"grid {args.n} x {args.n} = {x.size} points, {len(ems)} stations, {len(heights)} heights "
          f"-> {evals / 1e6:.0f} M evaluations; CPU time, median of {args.repeat} paired runs "
          "(the machine may be shared)")
    tk, tf, r = paired(run(ems), floor, args.repeat)
    _, tf32, r32 = paired(floor32, floor, args.repeat)
    _, _, r_h = paired(hoisted, floor, args.repeat)
    print(f"floor   EIRP/4piR^2 (float64): {tf:7.3f} s  {per_m(tf):6.2f} ms per million evaluations")
    print(f"floor   EIRP/4piR^2 (float32): float32/float64 = {r32:5.2f}")
    print(f"floor   horizontal distance once per antenna (float64, hoisted): hoisted/stated = {r_h:5.2f} "
          f"(a ratio to the hoisted floor is the printed ratio / {r_h:.2f})")
    results = [("mixed kinds with their structure", r, 3.0)]
    print(f"kernel, mixed kinds with their structure: {tk:7.3f} s  {per_m(tk):6.2f} ms per million  "
          f"ratio to floor {r:5.2f} (aim <= 3: {'within' if r <= 3.0 else 'ABOVE AIM'})")
    # the kernel takes points on a regular grid (as a site review gives them) in whole rows, with the terms
    # in x alone and y alone once per column and row; the same points in random order show the cost without
    perm = np.random.default_rng(1).permutation(x.size)
    xs, ys = x[perm], y[perm]
    _, _, r_loose = paired(lambda: ratio_grid(ems, xs, ys, heights, chunk_points=args.chunk), floor, args.repeat)
    print(f"kernel, the same points in random order (no grid rows to use): ratio to floor {r_loose:5.2f} "
          "(for information)")
    print(f"peak RSS {rss_peak:.0f} MB (before the kernel {rss0:.0f} MB); "
          f"peak traced allocations during the kernel {traced_peak / 2**20:.0f} MB  (aim < 1024 MB)")
    results.append(("peak allocations during the kernel, MB", traced_peak / 2**20, 1024.0))

    table = _table_pattern()
    paths = [(f"{k[0]} {k[2]}", dict(kinds=[k]), 3.0) for k in KINDS]
    paths += [("tilted 5 deg, mixed kinds", dict(tilt_deg=5.0), 4.0),
              ("pattern table, untilted (10 x 5 deg)", dict(pattern=table, kinds=[KINDS[3]]), 4.0),
              ("pattern table, tilted 5 deg", dict(pattern=table, kinds=[KINDS[3]], tilt_deg=5.0), 4.0)]
    print("each path: ratio to the float64 floor, with each antenna's structure (nearest-part distances) and "
          "as a point at its centre; the difference is the cost of the nearest-part distance")
    print(f"  {'path':40s} {'structure':>10s} {'point':>8s} {'aim':>5s}")
    for label, kw, aim in paths:
        with_s = stations(args.stations, extent, **kw)
        bare = stations(args.stations, extent, structure=False, **kw)
        _, _, r_s = paired(run(with_s), floor, args.repeat)
        _, _, r_p = paired(run(bare), floor, args.repeat)
        results.append((label, r_s, aim))
        print(f"  {label:40s} {r_s:10.2f} {r_p:8.2f} {aim:5.1f}" + ("" if r_s <= aim else "  ABOVE AIM"))

    # the single-precision table lookup is raised by a bound of its rounding: never below the float64 value
    for label, tilt in (("untilted", 0.0), ("tilted 5 deg", 5.0)):
        lo, hi = _table_check(table, tilt, x[::37], y[::37], heights)
        print(f"pattern table {label}: kernel / float64 bilinear (patterns.table_gain) - 1 on {x[::37].size} points: "
              f"min {lo:.1e}, max {hi:.1e} " + ("(never below 0)" if lo >= 0.0 else "BELOW THE FLOAT64 VALUE"))
        results.append((f"pattern table {label} never below float64", 0.0 if lo >= 0.0 else 1.0, 0.0))

    # the whole site analysis (grid, areas, keep-out attribution) on a 100 m site at 0.1 m spacing
    from rfsafe.site import Area, analyse_site

    areas = [Area("path", "public", ((40.0, 0.0), (45.0, 0.0), (45.0, 100.0), (40.0, 100.0))),
             Area("tent", "operators", ((60.0, 60.0), (70.0, 60.0), (70.0, 70.0), (60.0, 70.0)))]
    t0 = time.process_time()
    res_site = analyse_site(ems, boundary=((0, 0), (100, 0), (100, 100), (0, 100)), areas=areas,
                            heights_m=heights, grid_spacing_m=0.1)
    t_site = time.process_time() - t0
    rss_site = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    g = res_site.grid
    print(f"analyse_site: {g.nx} x {g.ny} = {g.nx * g.ny} points (margin {g.margin_m:g} m), {len(ems)} stations, "
          f"{len(heights)} heights: {t_site:.2f} s CPU; peak RSS of the process now {rss_site:.0f} MB")
    if not args.no_csv:
        csv_memory()
    above = [f"{label} ({v:.2f} > {aim:g})" if aim else label for label, v, aim in results if v > aim]
    print(f"verdict: {len(results) - len(above)} of {len(results)} checks within their aims against the stated "
          f"float64 floor (medians of paired CPU times on a machine that may be shared)"
          + ("; above: " + "; ".join(above) if above else ""))


def _table_check(table, tilt_deg, x, y, heights):
    """Relative excess of the kernel over the far-field prediction written out in float64 (stations as points)."""
    from rfsafe.antenna.patterns import direction_in_antenna_frame

    ems = stations(20, 100.0, structure=False, pattern=table, kinds=[KINDS[3]], tilt_deg=tilt_deg)
    got = ratio_grid(ems, x, y, heights).ratio
    ref = None
    for h in heights:
        tot = 0.0
        for em in ems:
            d = direction_in_antenna_frame(x - em.x_m, y - em.y_m, h - em.height_m, azimuth_deg=em.azimuth_deg,
                                           tilt_deg=em.tilt_deg, polarisation=em.polarisation)
            r2 = (x - em.x_m) ** 2 + (y - em.y_m) ** 2 + (h - em.height_m) ** 2
            s = em.pattern.gain(d) * em.ground_factor / (4.0 * math.pi * r2)
            tot = tot + np.array([em.power_w[e] * s / em.limit_w_m2[e] for e in range(2)])
        ref = tot if ref is None else np.maximum(ref, tot)
    far = np.ones(x.size, dtype=bool)                     # the near-field override (peak gain) left out
    for em in ems:
        far &= (x - em.x_m) ** 2 + (y - em.y_m) ** 2 > em.near_field_m ** 2
    rel = got[:, far] / ref[:, far] - 1.0
    return float(rel.min()), float(rel.max())


def _table_pattern():
    """An invented 10 x 5 degree pattern table (the size of a typical exported pattern)."""
    from rfsafe.antenna.patterns import PatternTable

    az = np.arange(0.0, 360.0, 10.0)
    el = np.arange(-90.0, 90.1, 5.0)
    A, E = np.meshgrid(np.radians(az), np.radians(el))
    gain = 6.0 * np.cos(A / 2) ** 2 * np.cos(E) - 12.0
    return make_pattern("table", table=PatternTable(azimuth_deg=az, elevation_deg=el, gain_dbi=gain))


_CSV_CHILD = """
import os, sys, time, tracemalloc
from rfsafe.site import assess_site, load_site
from rfsafe.cli.cmd_site import write_grid_csv
res = assess_site(load_site(sys.argv[1]))
g = res.grid
grid_mb = sum(a.nbytes for a in (g.x_m, g.y_m, g.ratio, g.worst_height_m, g.near_field, g.region)) / 2**20
t0 = time.process_time()
with open(os.devnull, "w") as fh:
    write_grid_csv(res, fh)
t = time.process_time() - t0
tracemalloc.start()                     # a second run, traced (tracing slows Python down)
with open(os.devnull, "w") as fh:
    write_grid_csv(res, fh)
peak = tracemalloc.get_traced_memory()[1] / 2**20
tracemalloc.stop()
print(g.nx * g.ny, grid_mb, peak, t)
"""


def csv_memory() -> None:
    """Peak RSS of writing ``--csv`` for the demo site at two grid spacings (child processes)."""
    import tempfile
    from pathlib import Path

    demo = Path(__file__).resolve().parent.parent / "reports_demo"
    print("--csv streaming (demo site at two spacings, child process; allocations while writing, beyond the "
          "grid's own arrays: the aim is a constant, whatever the grid size):")
    with tempfile.TemporaryDirectory() as tmp:
        for spacing in (0.25, 0.1):
            for name in ("event_field_day.toml", "event_field_day_vhf.toml"):
                text = (demo / name).read_text()
                if name == "event_field_day.toml":
                    text = text.replace("grid_spacing_m = 0.25", f"grid_spacing_m = {spacing}")
                (Path(tmp) / name).write_text(text)
            out = subprocess.run([sys.executable, "-c", _CSV_CHILD, str(Path(tmp) / "event_field_day.toml")],
                                 capture_output=True, text=True, check=True).stdout.split()
            n, grid_mb, peak, t = int(out[0]), *map(float, out[1:])
            print(f"  spacing {spacing:g} m: {n:>9,} points, grid arrays {grid_mb:6.1f} MB; peak allocations while "
                  f"writing {peak:6.1f} MB (tracemalloc); {t:6.2f} s CPU, {t / n * 1e6:.2f} us per row")


if __name__ == "__main__":
    main()
