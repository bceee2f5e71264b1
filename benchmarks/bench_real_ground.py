"""Benchmark of the wire solver over real ground (Sommerfeld tables) against free space (prints figures).

Aim (issue 17): the real-ground solve and a 10,000-point near-field map within 3 times their free-space
cost, measured in the same run. Printed: best-of times and the ratios; "cold" builds the Sommerfeld
interpolation table in the timed call (the first solve at a frequency and soil), "warm" reuses it
(every further configuration, place and map at that frequency and soil). Times are CPU times of this
process (the shared machine's load swells wall time); pin BLAS to one thread so they measure the work.

Run: OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 python benchmarks/bench_real_ground.py
"""

from __future__ import annotations

import time

import numpy as np

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire import ground as G
from rfsafe.antenna.wire.fields import near_fields

AIM = 3.0


def best_of(fn, repeat=5, before=None):
    times, out = [], None
    for _ in range(repeat):
        if before is not None:
            before()
        t = time.process_time()
        out = fn()
        times.append(time.process_time() - t)
    return min(times), out


def dipole(ground, **soil):
    return WireAntennaSpec.model_validate({
        "ground": ground, **soil,
        "wires": [{"points_m": [[-10.05, 0, 8.0], [10.05, 0, 8.0]], "radius_m": 0.001}],
        "feeds": [{"wire": 0}]})


def vertical_with_radials(ground, **soil):
    base = 0.3
    wires = [{"label": "v", "points_m": [[0, 0, base], [0, 0, base + 10.3]], "radius_m": 0.002}]
    for i in range(4):
        a = i * np.pi / 2
        wires.append({"points_m": [[0, 0, base], [10.3 * np.cos(a), 10.3 * np.sin(a), base]], "radius_m": 0.002})
    return WireAntennaSpec.model_validate({"ground": ground, **soil, "wires": wires,
                                          "feeds": [{"wire": "v", "position": 0.0}]})


def main() -> None:
    f_hz = 7.1e6
    soil = {"soil": "medium-dry-ground"}
    xs = np.linspace(-20, 20, 100)
    gx, gy = np.meshgrid(xs, xs)
    grid = np.c_[gx.ravel(), gy.ravel(), np.full(gx.size, 1.5)]
    print("rfsafe real-ground benchmark (best of 5, CPU seconds); ratios to free space in this run")
    print(f"{'case':<28} {'free space [s]':>14} {'real cold [s]':>13} {'real warm [s]':>13} "
          f"{'cold/free':>9} {'warm/free':>9}")
    worst = worst_cold = 0.0
    for name, make in (("dipole 8 m, solve", dipole), ("vertical + radials, solve", vertical_with_radials)):
        t_fs, sol_fs = best_of(lambda m=make: solve(m("free-space"), f_hz))
        t_cold, _ = best_of(lambda m=make: solve(m("real", **soil), f_hz), before=G._TABLES.clear)
        t_warm, sol_rg = best_of(lambda m=make: solve(m("real", **soil), f_hz))
        print(f"{name:<28} {t_fs:14.4f} {t_cold:13.4f} {t_warm:13.4f} {t_cold / t_fs:9.2f} {t_warm / t_fs:9.2f}")
        # near_fields directly: WireSolution keeps the fields of point sets it has seen (a store, not the work)
        def field_map(s):
            return near_fields(s.structure, s.k, s.segment_current_a, grid)

        t_mfs, _ = best_of(lambda s=sol_fs: field_map(s), repeat=3)
        t_mcold, _ = best_of(lambda s=sol_rg: field_map(s), repeat=3, before=G._TABLES.clear)
        t_mwarm, _ = best_of(lambda s=sol_rg: field_map(s), repeat=3)
        label = name.replace("solve", "10,000-point map")
        print(f"{label:<28} {t_mfs:14.4f} {t_mcold:13.4f} {t_mwarm:13.4f} {t_mcold / t_mfs:9.2f} "
              f"{t_mwarm / t_mfs:9.2f}")
        worst = max(worst, t_warm / t_fs, t_mwarm / t_mfs)
        worst_cold = max(worst_cold, t_cold / t_fs, t_mcold / t_mfs)
    print(f"worst warm ratio {worst:.2f}, worst cold ratio {worst_cold:.2f} (aim: within {AIM:g}x free space; "
          f"{'met' if max(worst, worst_cold) <= AIM else 'NOT met'}). The real-ground solve also fills the image "
          "matrix and the map sums the image fields (about 2x free space, as over a perfect ground) before the "
          "Sommerfeld remainder is added.")


if __name__ == "__main__":
    main()
