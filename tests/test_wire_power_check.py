"""The wire solver's radiated-power check above ``solver._POWER_SUM_MAX_SEGMENTS`` segments against its reference.

Up to that size solve() reports the radiated power from the real part of the currents' mutual
impedance, the double sum of ``solver._radiated_power`` (the induced-EMF form, Harrington 1968 Sec. 4;
Balanis, Antenna Theory, 3rd ed., Sec. 8.5). Above it, the sphere integral of the far-field intensity
on the pattern grid the peak search evaluates anyway (``solver._pattern_grid``; Balanis Sec. 2.6,
radiated power as the integral of the radiation intensity). Both are exact for the same currents: the
double sum up to its quadrature along the segments (below 1e-7 of the power, its docstring), the
sphere integral up to the band-limit tail (below 1e-15). Measured differences: 6e-15 to 1.4e-12 of the
power for structures of 20 to 1600 segments, electrical sizes kD from 4 to 400; the tolerance 1e-9
is some 500 times that and far below the 1e-3 to which the check is read (``radiated / input power``
printed to 5 decimals). A grid too coarse for the integral would be off by its own size (several
per cent and more), which the same tolerance catches.
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire import solver as S

F_HZ = 299_792_458.0  # lambda = 1 m


def _spec(d):
    return WireAntennaSpec.model_validate(d)


def _array(side, ground="free-space", z0=-0.25):
    wires = [{"points_m": [[0.3 * i, 0.3 * j, z0], [0.3 * i, 0.3 * j, z0 + 0.5]], "radius_m": 0.002, "segments": 21}
             for i in range(side) for j in range(side)]
    return _spec({"ground": ground, "wires": wires, "feeds": [{"wire": 0}]})


def _long_wire(n, ground="free-space", z=0.0):
    return _spec({"ground": ground, "wires": [{"points_m": [[0, 0, z], [n * 0.04, 0, z + 0.3]], "radius_m": 0.002,
                                               "segments": n}], "feeds": [{"wire": 0, "position": 0.3}]})


def _inverted_v(n, ground="free-space", z0=0.0):
    h = n * 0.02
    return _spec({"ground": ground, "wires": [
        {"points_m": [[-0.8 * h, 0, z0], [0, 0, z0 + 0.6 * h]], "radius_m": 0.002, "segments": n // 2, "label": "a"},
        {"points_m": [[0, 0, z0 + 0.6 * h], [0.8 * h, 0, z0]], "radius_m": 0.002, "segments": n // 2}],
        "feeds": [{"wire": "a", "position": 1.0}]})


CASES = {
    "dipole": lambda: _spec({"wires": [{"points_m": [[0, 0, -0.24], [0, 0, 0.24]], "radius_m": 0.003,
                                        "segments": 21}], "feeds": [{"wire": 0}]}),
    "array of dipoles (kD 6)": lambda: _array(3),
    "array of dipoles over ground": lambda: _array(4, "perfect", 0.1),
    "array of dipoles, 7 x 7 (kD 12)": lambda: _array(7),
    "long wire (kD 25)": lambda: _long_wire(100),
    "long wire, 800 segments (kD 200)": lambda: _long_wire(800),
    "long wire over ground": lambda: _long_wire(300, "perfect", 0.2),
    "inverted V, 400 segments": lambda: _inverted_v(400),
    "inverted V over ground": lambda: _inverted_v(260, "perfect", 0.1),
}


@pytest.mark.parametrize("name", list(CASES))
def test_sphere_integral_on_the_pattern_grid_equals_the_double_sum(name, monkeypatch):
    sol = solve(CASES[name](), F_HZ)
    st, k, seg_i = sol.structure, sol.k, sol.segment_current_a
    ref = S._radiated_power(st, k, seg_i)
    monkeypatch.setattr(S, "_POWER_SUM_MAX_SEGMENTS", 0)       # the sphere integral at every size
    grid = S._power_check(st, k, seg_i)
    assert grid == pytest.approx(ref, rel=1e-9)
    assert solve(CASES[name](), F_HZ).radiated_power_w == grid      # what solve() reports on that route
    monkeypatch.setattr(S, "_POWER_SUM_MAX_SEGMENTS", 10 ** 9)   # the double sum at every size
    assert S._power_check(st, k, seg_i) == ref
    assert solve(CASES[name](), F_HZ).radiated_power_w == ref


def test_solve_takes_the_double_sum_up_to_the_threshold_and_the_grid_above():
    small = solve(_long_wire(S._POWER_SUM_MAX_SEGMENTS), F_HZ)
    large = solve(_long_wire(S._POWER_SUM_MAX_SEGMENTS + 1), F_HZ)
    assert small.structure.num_segments <= S._POWER_SUM_MAX_SEGMENTS < large.structure.num_segments
    assert small.radiated_power_w == S._radiated_power(small.structure, small.k, small.segment_current_a)
    assert large.radiated_power_w == S._power_check(large.structure, large.k, large.segment_current_a)
    assert large.radiated_power_w != S._radiated_power(large.structure, large.k, large.segment_current_a)
    assert abs(large.radiated_over_input_power - 1.0) < 1e-3


def test_a_grid_too_coarse_for_the_integral_would_be_caught():
    """Half the Gauss-Legendre points in theta for a long wire (kD 200): the integral is then far off,
    so the tolerance above separates an exact rule from an inexact one."""
    sol = solve(_long_wire(800), F_HZ)
    st, k, seg_i = sol.structure, sol.k, sol.segment_current_a
    ref = S._radiated_power(st, k, seg_i)
    n_t, n_p = 60, 120     # against 136 x 260 in solve()
    xg, wg = S.gauss_legendre_01(n_t)
    th, ph = np.meshgrid(np.arccos(2 * xg - 1), 2 * math.pi * np.arange(n_p) / n_p, indexing="ij")
    u = S._intensity(st, k, seg_i, S._directions(th, ph))
    coarse = float(np.sum(u * (2 * wg)[:, None]) * 2 * math.pi / n_p)
    assert abs(coarse / ref - 1) > 1e-3
