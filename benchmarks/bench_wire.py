"""Benchmark of the thin-wire moment-method solver (prints figures; not a test).

Aims (floors stated in the task): a 3-element beam at ~60 unknowns solved in under 0.3 s, and a
10,000-point near-field map in under 1 s. Also: fill and solve time against the number of
unknowns (20 to 200) and the ratio of fill time to numpy's dense solve of the same matrix.

Run: OMP_NUM_THREADS=1 /work/venv/bin/python benchmarks/bench_wire.py  (pinning BLAS threads keeps
the timings stable on the shared 2-core machine)
"""

from __future__ import annotations

import time

import numpy as np

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire.geometry import build_structure
from rfsafe.antenna.wire.model import check_wire_antenna
from rfsafe.antenna.wire.solver import impedance_matrix

F_HZ = 299_792_458.0  # lambda = 1 m
BEAM_FLOOR_S = 0.3
MAP_FLOOR_S = 1.0


def best_of(fn, repeat=5):
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def beam(segments_per_element):
    wires = [{"points_m": [[-length / 2, y, 0.0], [length / 2, y, 0.0]], "radius_m": 0.00425,
              "segments": segments_per_element}
             for y, length in ((-0.2, 0.482), (0.0, 0.47), (0.2, 0.424))]
    return WireAntennaSpec.model_validate({"wires": wires, "feeds": [{"wire": 1}]})


def long_wire(unknowns):
    return WireAntennaSpec.model_validate({
        "wires": [{"points_m": [[0, 0, 0.0], [unknowns * 0.04, 0, 0.0]], "radius_m": 0.002,
                   "segments": unknowns + 1, "label": "w"}],
        "feeds": [{"wire": "w", "position": 0.3}]})


def main() -> None:
    print("rfsafe wire solver benchmark (best of 5; 2 shared cores)")
    print(f"{'unknowns':>8} {'fill [s]':>10} {'dense solve [s]':>16} {'fill/solve':>11} {'full solve() [s]':>17}")
    for n in (20, 50, 100, 150, 200):
        s = long_wire(n)
        st = build_structure(s, F_HZ, check_wire_antenna(s))
        t_fill, z = best_of(lambda: impedance_matrix(st))
        rhs = np.ones(z.shape[0], dtype=complex)
        t_lin, _ = best_of(lambda: np.linalg.solve(z, rhs))
        t_all, _ = best_of(lambda: solve(s, F_HZ), repeat=3)
        print(f"{st.num_unknowns:8d} {t_fill:10.4f} {t_lin:16.6f} {t_fill / t_lin:11.0f} {t_all:17.4f}")

    s = beam(21)
    t_beam, sol = best_of(lambda: solve(s, F_HZ))
    print(f"\n3-element beam, {sol.num_unknowns} unknowns: solve() {t_beam:.3f} s "
          f"(floor {BEAM_FLOOR_S} s, ratio {t_beam / BEAM_FLOOR_S:.2f} of the floor); "
          f"gain {sol.gain_dbi:.2f} dBi, Z = {sol.feed_impedance_ohm[0]:.2f} ohm")

    x, y = np.meshgrid(np.linspace(-1.0, 1.0, 100), np.linspace(-1.0, 1.0, 100))
    pts = np.column_stack([x.ravel(), y.ravel(), np.full(x.size, 0.1)])  # 10,000 points 0.1 lambda above
    t_map, (e, _h) = best_of(lambda: sol.fields_rms(pts, 1000.0), repeat=3)
    print(f"near-field map, {len(pts)} points x {sol.num_segments} segments: {t_map:.3f} s "
          f"(floor {MAP_FLOOR_S} s, ratio {t_map / MAP_FLOOR_S:.2f} of the floor); max E {e.max():.1f} V/m rms at 1 kW")


if __name__ == "__main__":
    main()
