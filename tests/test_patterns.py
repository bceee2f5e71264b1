"""Tests of rfsafe.antenna.patterns: analytic patterns, the beam model, tables and orientation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rfsafe.antenna import patterns as pt
from rfsafe.errors import InputError


def own_sphere_integral(pattern, n_theta=400, n_phi=400):
    """Midpoint rule in (theta from the antenna's up axis, phi), written here independently
    of the library's quadrature: integral of G sin(theta) dtheta dphi [sr]."""
    th = (np.arange(n_theta) + 0.5) * math.pi / n_theta
    ph = (np.arange(n_phi) + 0.5) * 2 * math.pi / n_phi
    th, ph = np.meshgrid(th, ph, indexing="ij")
    el = 90.0 - np.degrees(th)
    d = pt.direction_from_angles(np.degrees(ph), el, polarisation="horizontal")
    g = pattern.gain(d)
    return float(np.sum(g * np.sin(th)) * (math.pi / n_theta) * (2 * math.pi / n_phi))


# ----------------------------------------------------------------- orientation

def test_direction_along_the_main_beam_bearing():
    # azimuth 90 = east (compass bearing, clockwise from north): a point due east is on the beam
    d = pt.direction_in_antenna_frame(10.0, 0.0, 0.0, azimuth_deg=90.0, tilt_deg=0.0, polarisation="vertical")
    assert d.forward == pytest.approx(1.0)
    assert d.right == pytest.approx(0.0, abs=1e-15)
    # a point due south is then 90 deg clockwise of the beam: "right"
    d = pt.direction_in_antenna_frame(0.0, -5.0, 0.0, azimuth_deg=90.0)
    assert d.right == pytest.approx(1.0)
    assert d.azimuth_deg == pytest.approx(90.0)


def test_tilt_raises_the_beam():
    # beam tilted up 30 deg: a point at 30 deg elevation along the bearing is on the beam
    d = pt.direction_in_antenna_frame(0.0, math.cos(math.radians(30)), math.sin(math.radians(30)),
                                      azimuth_deg=0.0, tilt_deg=30.0)
    assert d.forward == pytest.approx(1.0)
    assert d.elevation_deg == pytest.approx(0.0, abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(-50, 50), st.floats(-50, 50), st.floats(-50, 50),
       st.floats(-360, 360), st.floats(-90, 90))
def test_direction_is_a_unit_vector_and_angles_round_trip(dx, dy, dz, az, tilt):
    """A rotation preserves length (common practice); angles map back to the same vector."""
    if math.hypot(dx, dy, dz) < 1e-6:
        return
    d = pt.direction_in_antenna_frame(dx, dy, dz, azimuth_deg=az, tilt_deg=tilt)
    assert d.forward ** 2 + d.right ** 2 + d.up ** 2 == pytest.approx(1.0, abs=1e-12)
    back = pt.direction_from_angles(d.azimuth_deg, d.elevation_deg)
    for a, b in zip(back[:3], d[:3]):
        assert a == pytest.approx(b, abs=1e-9)


def test_unknown_polarisation_is_an_input_error():
    with pytest.raises(InputError, match=r'^polarisation: "circular" is not accepted '
                                         r'\(accepted: "horizontal", "vertical"\)$'):
        pt.direction_in_antenna_frame(1, 0, 0, polarisation="circular")


# ----------------------------------------------------------------- analytic kinds

def test_half_wave_dipole_peak_is_2_15_dbi():
    # Balanis, Antenna Theory 4th ed., sec. 4.6: D0 = 4/Cin(2 pi) ~= 1.643, i.e. 2.15 dBi.
    # Tolerance 0.005: the published 1.643 is rounded and uses Cin(2 pi) ~= 2.435.
    d = pt.direction_from_angles(0.0, 0.0)  # broadside to a horizontal wire
    g = pt.make_pattern("half-wave-dipole").gain(d)
    assert g == pytest.approx(1.643, abs=0.005)
    assert pt.pattern_gain_dbi("half-wave-dipole", d) == pytest.approx(2.15, abs=0.005)


def test_half_wave_dipole_directivity_is_four_over_cin_2pi():
    # Balanis, Antenna Theory 4th ed., sec. 4.6: D0 = 4 / Cin(2 pi), Cin(x) = int_0^x (1 - cos t)/t dt.
    # The module writes the value out (no quadrature at start-up); this is the quadrature it replaces
    # (64-point Gauss-Legendre, numpy's nodes), which must give the same float bit for bit, and the
    # cosine integral is also checked against scipy's Ci: Cin(x) = gamma + ln x - Ci(x) (Abramowitz and
    # Stegun 5.2.2, from memory).
    from scipy.special import sici

    nodes, weights = np.polynomial.legendre.leggauss(64)
    x = 2.0 * math.pi
    t = 0.5 * x * (nodes + 1.0)
    cin = float(0.5 * x * np.sum(weights * (1.0 - np.cos(t)) / t))
    assert pt.HALF_WAVE_DIPOLE_DIRECTIVITY == 4.0 / cin
    cin_closed = np.euler_gamma + math.log(x) - float(sici(x)[1])
    assert cin == pytest.approx(cin_closed, rel=1e-13)   # smooth integrand: 64 points converge to rounding
    assert pt.QUARTER_WAVE_VERTICAL_DIRECTIVITY == 2.0 * pt.HALF_WAVE_DIPOLE_DIRECTIVITY


def test_half_wave_dipole_nulls_off_the_ends_and_lobes_broadside():
    # A horizontal dipole pointed at azimuth 30: wire along bearings 120/300, lobes toward 30 and 210.
    kw = dict(azimuth_deg=30.0, tilt_deg=0.0, polarisation="horizontal")
    pat = pt.make_pattern("half-wave-dipole")
    for bearing, expected in ((120.0, 0.0), (300.0, 0.0)):
        b = math.radians(bearing)
        d = pt.direction_in_antenna_frame(math.sin(b), math.cos(b), 0.0, **kw)
        assert pat.gain(d) == pytest.approx(expected, abs=1e-12)
    for bearing in (30.0, 210.0):
        b = math.radians(bearing)
        d = pt.direction_in_antenna_frame(math.sin(b), math.cos(b), 0.0, **kw)
        assert pat.gain(d) == pytest.approx(pt.HALF_WAVE_DIPOLE_DIRECTIVITY, rel=1e-12)


def test_half_wave_dipole_pattern_shape():
    # Balanis sec. 4.6: field pattern cos(pi/2 cos th)/sin th; at th = 60 deg the power is
    # [cos(pi/4)/sin(60 deg)]^2 = (1/2)/(3/4) = 2/3 of the peak.
    d = pt.direction_from_angles(0.0, 30.0, polarisation="vertical")  # 60 deg from a vertical wire
    g = pt.make_pattern("half-wave-dipole").gain(d)
    assert g == pytest.approx(pt.HALF_WAVE_DIPOLE_DIRECTIVITY * 2.0 / 3.0, rel=1e-12)


def test_vertical_dipole_is_omnidirectional_with_a_null_overhead():
    pat = pt.make_pattern("half-wave-dipole")
    az = np.linspace(0, 350, 36)
    g = pat.gain(pt.direction_from_angles(az, 0.0, polarisation="vertical"))
    assert np.allclose(g, pt.HALF_WAVE_DIPOLE_DIRECTIVITY, rtol=1e-12)
    assert pat.gain(pt.direction_from_angles(0.0, 90.0, polarisation="vertical")) == pytest.approx(0.0, abs=1e-12)


def test_short_dipole_peak_and_shape():
    # Balanis sec. 4.2: infinitesimal dipole D = 3/2 sin^2(theta).
    pat = pt.make_pattern("short-dipole")
    assert pat.peak_gain_dbi == pytest.approx(10 * math.log10(1.5))
    d = pt.direction_from_angles(0.0, 45.0, polarisation="vertical")
    assert pat.gain(d) == pytest.approx(1.5 * 0.5, rel=1e-12)


def test_quarter_wave_vertical_5_16_dbi_on_the_horizon_and_mirrored_below():
    # Balanis sec. 4.7: monopole over perfect ground, D0 = 2 x 1.643 = 3.286 (5.16 dBi);
    # tolerance as for the dipole (rounded published value).
    pat = pt.make_pattern("quarter-wave-vertical")
    d0 = pt.direction_from_angles(0.0, 0.0, polarisation="horizontal")  # axis is "up" regardless
    assert 10 * math.log10(float(pat.gain(d0))) == pytest.approx(5.16, abs=0.005)
    el = np.linspace(5, 85, 17)
    up = pat.gain(pt.direction_from_angles(0.0, el))
    down = pat.gain(pt.direction_from_angles(0.0, -el))
    assert np.array_equal(up, down)  # conservative mirror below the horizon (documented choice)


@pytest.mark.parametrize("kind", ["isotropic", "short-dipole", "half-wave-dipole"])
def test_directivity_integrates_to_4_pi(kind):
    """Definition of directivity: the integral of D over the sphere is 4 pi (Balanis sec. 2.6).
    Tolerance 1e-4: midpoint rule with 400 x 400 cells, error O(h^2) ~ 1e-5."""
    assert own_sphere_integral(pt.make_pattern(kind)) == pytest.approx(4 * math.pi, rel=1e-4)


def test_quarter_wave_vertical_integrates_to_4_pi_over_the_upper_hemisphere():
    # image theory: the monopole radiates into the upper half-space only; our mirrored lower
    # hemisphere doubles the full-sphere integral to 8 pi (deliberately conservative).
    pat = pt.make_pattern("quarter-wave-vertical")
    assert own_sphere_integral(pat) == pytest.approx(8 * math.pi, rel=1e-4)
    assert pat.sphere_integral_sr == pytest.approx(8 * math.pi)


def test_declared_gain_scales_an_analytic_shape():
    pat = pt.make_pattern("half-wave-dipole", peak_gain_dbi=3.0)
    assert 10 * math.log10(float(pat.gain(pt.direction_from_angles(0.0, 0.0)))) == pytest.approx(3.0)


# ----------------------------------------------------------------- beam model

BEAM = dict(peak_gain_dbi=8.0, front_to_back_db=20.0, beamwidth_h_deg=66.0, beamwidth_v_deg=120.0)


def test_beam_front_to_back_and_half_power_beamwidths_as_declared():
    pat = pt.make_pattern("beam", **BEAM)
    g = lambda az, el: 10 * math.log10(float(pat.gain(pt.direction_from_angles(az, el))))  # noqa: E731
    assert g(0, 0) == pytest.approx(8.0, abs=1e-12)
    assert g(0, 0) - g(180, 0) == pytest.approx(20.0, abs=1e-9)
    half = 10 * math.log10(0.5)  # -3.0103 dB: "half-power" is exactly half
    for az in (33.0, -33.0):
        assert g(az, 0) - g(0, 0) == pytest.approx(half, abs=1e-9)
    for el in (60.0, -60.0):
        assert g(0, el) - g(0, 0) == pytest.approx(half, abs=1e-9)
    # monotone main lobe: no invented side lobes
    az = np.linspace(0, 180, 181)
    lin = pat.gain(pt.direction_from_angles(az, 0.0))
    assert np.all(np.diff(lin) <= 0)


@settings(max_examples=300, deadline=None)
@given(st.floats(1e-12, 0.05), st.sampled_from([-1.0, 1.0]), st.floats(200.0, 359.9), st.floats(10.0, 60.0))
def test_beam_lobe_just_behind_a_wide_beam_is_not_lost_to_rounding(d, side, bw_h, fb):
    """Just off the back of a wide beam the lobe [(1 + cos phi)/2]^p is well above a deep back-lobe floor
    (p = 0.06 at 359 deg); (1 + cos phi)/2 = sin^2(d/2) at phi = pi - d (half-angle identity, common
    practice) must not round to zero there, or the gain would be understated by the floor."""
    p, q = pt.beam_exponents(bw_h, 60.0)
    direction = pt.AntennaDirection(forward=np.array(-math.cos(d)), right=np.array(side * math.sin(d)),
                                    up=np.array(0.0), axis=np.array(side * math.sin(d)))
    got = float(pt.beam_gain(direction, peak_gain_dbi=0.0, front_to_back_db=fb, beamwidth_h_deg=bw_h,
                             beamwidth_v_deg=60.0, downward_floor=False))
    # the direction as given (forward, right) = (-cos d, sin d) rounded: its exact half-angle value
    f, r = -math.cos(d), math.sin(d)
    rho = math.hypot(f, r)
    exact = max((r * r / (2.0 * rho * (rho - f))) ** p, 10.0 ** (-fb / 10.0))
    assert got == pytest.approx(exact, rel=1e-12)
    assert got >= exact * (1.0 - 1e-12)


def test_beam_integral_is_at_most_4_pi():
    """Energy conservation: a declared gain is accepted only if G0 x integral <= 4 pi, for the radiating
    lobe; the downward floor is a stated overstatement on top of it (it raises the integral)."""
    from types import SimpleNamespace

    pat = pt.make_pattern("beam", **BEAM)
    lobe = SimpleNamespace(gain=lambda d: pt.beam_gain(d, **BEAM, downward_floor=False))
    assert own_sphere_integral(lobe) <= 4 * math.pi
    # the library's own figure agrees with the independent quadrature (kinks at the floor: 1e-3)
    assert pat.sphere_integral_sr == pytest.approx(own_sphere_integral(lobe), rel=1e-3)
    assert own_sphere_integral(pat) > own_sphere_integral(lobe)


def test_beam_with_more_gain_than_its_lobe_allows_is_rejected():
    d_max = 10 * math.log10(4 * math.pi / pt.beam_sphere_integral(20.0, 66.0, 120.0))
    pt.make_pattern("beam", **{**BEAM, "peak_gain_dbi": d_max - 0.01})
    with pytest.raises(InputError) as exc:
        pt.make_pattern("beam", **{**BEAM, "peak_gain_dbi": 12.0}, field="stations[1].antenna")
    assert str(exc.value) == (
        "stations[1].antenna.gain_dbi: 12.0 is more than a main lobe of 66 x 120 deg with 20 dB "
        f"front-to-back can have (at most {math.floor(d_max * 100) / 100:.2f} dBi in rfsafe's beam model); "
        "check that the gain is in dBi (not dBd) and the beamwidths")


@pytest.mark.parametrize("n", [1, 2, 3, 4, 5, 8, 9, 64, 181, 361, 721])
def test_gauss_legendre_nodes_and_weights_agree_with_numpy(n):
    """Reference library: numpy.polynomial.legendre.leggauss (eigenvalues of the companion matrix).
    Nodes to a few units of rounding (4e-16 absolute); weights to 1e-8 relative: numpy's outermost
    weights carry up to 3e-9 of rounding at n = 721 (compared once with a 50-digit evaluation)."""
    x, w = pt.gauss_legendre(n)
    x_ref, w_ref = np.polynomial.legendre.leggauss(n)
    assert np.max(np.abs(x - x_ref)) <= 4e-16
    assert np.max(np.abs(w - w_ref) / w_ref) <= 1e-8
    assert np.all(np.diff(x) > 0) and np.array_equal(x, -x[::-1]) and np.array_equal(w, w[::-1])


def test_gauss_legendre_integrates_polynomials_of_degree_2n_minus_1_exactly():
    """Definition of n-point Gauss quadrature: exact for x^k, k <= 2n - 1 (common practice);
    integral of x^k over [-1, 1] is 2 / (k + 1) for even k, 0 for odd k."""
    n = 12
    x, w = pt.gauss_legendre(n)
    for k in range(2 * n):
        exact = 2.0 / (k + 1) if k % 2 == 0 else 0.0
        assert float(np.sum(w * x ** k)) == pytest.approx(exact, abs=1e-14)


def test_stored_beam_elevation_rule_is_gauss_legendre_721_bit_for_bit():
    """The 721-point rule beam_sphere_integral reads from rfsafe/antenna/data is the one gauss_legendre
    computes (a stored copy, read instead of computed at start-up): the same floats exactly."""
    x, w = pt._beam_elevation_rule()
    x_ref, w_ref = pt.gauss_legendre(721)
    assert x.shape == w.shape == (721,)
    assert np.array_equal(x, x_ref) and np.array_equal(w, w_ref)


@pytest.mark.parametrize("fb, bh, bv", [(20.0, 66.0, 120.0), (25.0, 60.0, 40.0), (3.02, 359.0, 179.0),
                                        (60.0, 1.0, 1.0), (10.0, 180.0, 90.0), (30.0, 0.5, 170.0)])
def test_beam_sphere_integral_equals_the_full_grid_sum(fb, bh, bv):
    """The sorted row sums give the 721 x 1440 grid of the beam model summed term by term (written here
    with numpy's Gauss-Legendre nodes); 1e-13: numpy's rounding of its outermost weights (above)."""
    p, q = pt.beam_exponents(bh, bv)
    mu, w = np.polynomial.legendre.leggauss(721)
    az = np.radians((np.arange(1440) + 0.5) * 0.25)
    lobe = np.maximum(np.sqrt(1.0 - mu * mu)[:, None] ** q * (0.5 * (1.0 + np.cos(az)))[None, :] ** p,
                      10.0 ** (-fb / 10.0))
    grid = float(np.sum(w[:, None] * lobe) * (2.0 * math.pi / 1440))
    assert pt.beam_sphere_integral(fb, bh, bv) == pytest.approx(grid, rel=1e-13)


@pytest.mark.parametrize("params, message", [
    (dict(front_to_back_db=3.0), "antenna.front_to_back_db: 3.0 is out of range (accepted: > 3.01 dB, "
                                 "so that the half-power points lie on the main lobe, and <= 60 dB, where "
                                 "rfsafe's beam model is checked)"),
    (dict(front_to_back_db=60.5), "antenna.front_to_back_db: 60.5 is out of range (accepted: > 3.01 dB, "
                                  "so that the half-power points lie on the main lobe, and <= 60 dB, where "
                                  "rfsafe's beam model is checked)"),
    (dict(beamwidth_h_deg=360.0), "antenna.beamwidth_h_deg: 360.0 is out of range (accepted: >= 0.1 and < 360)"),
    (dict(beamwidth_v_deg=180.0), "antenna.beamwidth_v_deg: 180.0 is out of range (accepted: >= 0.1 and < 180)"),
    # found by the long fuzz: cos(6.4e-8 deg / 4) rounds to 1 and the exponent divided by zero (exit 3)
    (dict(beamwidth_h_deg=6.4e-8), "antenna.beamwidth_h_deg: 6.4e-08 is out of range (accepted: >= 0.1 and < 360)"),
    (dict(beamwidth_v_deg=1e-300), "antenna.beamwidth_v_deg: 1e-300 is out of range (accepted: >= 0.1 and < 180)"),
    (dict(beamwidth_v_deg=None), 'antenna.beamwidth_v_deg: is required for kind = "beam"'),
    (dict(peak_gain_dbi=float("nan")), "antenna.gain_dbi: nan must be a finite number (dBi)"),
])
def test_beam_parameter_errors(params, message):
    with pytest.raises(InputError) as exc:
        pt.make_pattern("beam", **{**BEAM, **params})
    assert str(exc.value) == message


@pytest.mark.parametrize("bh, bv", [(0.1, 60.0), (60.0, 0.1), (0.1, 0.1)])
def test_narrowest_accepted_beam_is_finite_and_peaks_on_its_axis(bh, bv):
    """At the narrowest accepted beamwidths (rfsafe.bounds.MIN_BEAMWIDTH_DEG) the exponents are finite and the
    model keeps its definition: peak gain on the axis, half of it (-3 dB) at half the beamwidth off the axis
    in that plane (the half-power beamwidth, IEEE Std 145 definition), the floor peak - F/B well off it."""
    p, q = pt.beam_exponents(bh, bv)
    assert math.isfinite(p) and math.isfinite(q) and p > 0 and q > 0
    pat = pt.make_pattern("beam", **{**BEAM, "beamwidth_h_deg": bh, "beamwidth_v_deg": bv})
    g0 = 10.0 ** (BEAM["peak_gain_dbi"] / 10.0)
    axis = pat.gain(pt.direction_from_angles(0.0, 0.0))
    half_h = pat.gain(pt.direction_from_angles(bh / 2.0, 0.0))
    half_v = pat.gain(pt.direction_from_angles(0.0, bv / 2.0))
    off = pat.gain(pt.direction_from_angles(30.0, 0.0))
    assert float(axis) == pytest.approx(g0, rel=1e-12)
    # 1e-6: cos of a quarter of 0.1 deg is 1 - 9.5e-8, held to about 1e-9 relative in float64
    assert float(half_h) == pytest.approx(g0 / 2.0, rel=1e-6)
    assert float(half_v) == pytest.approx(g0 / 2.0, rel=1e-6)
    if bh < 30.0:
        assert float(off) == pytest.approx(g0 * 10.0 ** (-BEAM["front_to_back_db"] / 10.0), rel=1e-12)


def test_beam_parameters_on_a_dipole_are_rejected():
    with pytest.raises(InputError, match=r'^antenna\.front_to_back_db: 20\.0 applies only to kind = "beam"$'):
        pt.make_pattern("half-wave-dipole", front_to_back_db=20.0)


def test_unknown_kind():
    with pytest.raises(InputError, match=r'^antenna\.kind: "yagi" is not a pattern kind \(accepted: "isotropic"'):
        pt.make_pattern("yagi")


def test_beam_points_along_its_bearing_in_the_site_frame():
    pat = pt.make_pattern("beam", **BEAM)
    bearings = np.radians(np.arange(0, 360, 5.0))
    d = pt.direction_in_antenna_frame(np.sin(bearings), np.cos(bearings), 0.0, azimuth_deg=135.0)
    g = pat.gain(d)
    assert np.degrees(bearings[np.argmax(g)]) == pytest.approx(135.0)
    back = int(np.argmin(np.abs(np.degrees(bearings) - 315.0)))
    assert g[back] == pytest.approx(g.min())  # the back (315) is at the floor, peak - F/B
    assert 10 * math.log10(g.max() / g[back]) == pytest.approx(20.0)


# ----------------------------------------------------------------- tables

def write_table(tmp_path, az, el, gain_fn, name="pat.csv", extra_lines=()):
    lines = ["# test table", "azimuth_deg,elevation_deg,gain_dbi"]
    for e in el:
        for a in az:
            lines.append(f"{a},{e},{gain_fn(a, e)}")
    lines.extend(extra_lines)
    p = tmp_path / name
    p.write_text("\n".join(lines) + "\n")
    return p


def _pole_safe(fn):
    return lambda a, e: fn(0.0, e) if abs(e) == 90 else fn(a, e)


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(-30, 15, allow_nan=False), min_size=7 * 12, max_size=7 * 12))
def test_table_reproduces_its_own_samples_exactly(values):
    import tempfile
    from pathlib import Path

    az = np.arange(0, 360, 30.0)
    el = np.array([-90, -60, -30, 0, 30, 60, 90.0])
    grid = np.array(values).reshape(7, 12)
    grid[0, :] = grid[0, 0]
    grid[-1, :] = grid[-1, 0]
    with tempfile.TemporaryDirectory() as d:
        p = write_table(Path(d), az, el, lambda a, e: repr(float(grid[list(el).index(e), list(az).index(a)])))
        table = pt.load_pattern_table(p)
    A, E = np.meshgrid(az, el)
    got = pt.pattern_gain_dbi("table", pt.direction_from_angles(A, E), table=table)
    # exact up to rounding: the angles -> unit vector -> angles round trip is off by ~1e-14 deg,
    # which next to a 45 dB step is ~1e-11 dB; 1e-9 dB leaves margin and still catches any real error
    assert np.allclose(got, grid, rtol=0, atol=1e-9)


def test_table_interpolates_linear_power_and_wraps_azimuth(tmp_path):
    az = [0, 90, 180, 270]
    el = [-90, 0, 90]
    gains = {0: 10 * math.log10(4.0), 90: 0.0, 180: 0.0, 270: 10 * math.log10(2.0)}
    p = write_table(tmp_path, az, el, _pole_safe(lambda a, e: gains[a] if e == 0 else -10.0))
    table = pt.load_pattern_table(p)
    g = lambda a, e: float(pt.table_gain(pt.direction_from_angles(a, e), table))  # noqa: E731
    assert g(45, 0) == pytest.approx((4.0 + 1.0) / 2)     # midway 0..90: mean of linear gains
    assert g(315, 0) == pytest.approx((2.0 + 4.0) / 2)    # wraps 270 -> 360 (= 0)
    assert g(0, 45) == pytest.approx((4.0 + 0.1) / 2)     # midway in elevation


def test_table_azimuth_is_relative_to_the_antenna_bearing(tmp_path):
    p = write_table(tmp_path, [0, 90, 180, 270], [-90, 0, 90],
                    _pole_safe(lambda a, e: 10.0 if (a == 0 and e == 0) else 0.0))
    table = pt.load_pattern_table(p)
    # antenna pointed west (270): a point due west sees the table's azimuth 0
    d = pt.direction_in_antenna_frame(-1.0, 0.0, 0.0, azimuth_deg=270.0)
    assert float(pt.pattern_gain_dbi("table", d, table=table)) == pytest.approx(10.0)


def test_isotropic_table_has_unit_sphere_average(tmp_path):
    p = write_table(tmp_path, np.arange(0, 360, 15), np.arange(-90, 91, 15), lambda a, e: 0.0)
    assert pt.load_pattern_table(p).sphere_average_gain == pytest.approx(1.0, rel=1e-12)


def test_table_peak_gain_must_agree(tmp_path):
    p = write_table(tmp_path, [0, 180], [-90, 0, 90], _pole_safe(lambda a, e: 6.0 if e == 0 and a == 0 else 0.0))
    table = pt.load_pattern_table(p)
    assert pt.make_pattern("table", table=table).peak_gain_dbi == 6.0
    with pytest.raises(InputError, match=r"^antenna\.gain_dbi: 9\.0 differs from the largest gain_dbi in the "
                                         r"pattern table \(6 dBi\); give the same value or leave it out$"):
        pt.make_pattern("table", table=table, peak_gain_dbi=9.0)


@pytest.mark.parametrize("content, message", [
    ("azimuth_deg,elevation_deg,gain_dbi\n0,-90,0\n0,0,0\n90,0,0\n0,90,0\n90,90,0\n90,-90,0\n0,0,1\n",
     'line 8: azimuth_deg 0.0, elevation_deg 0.0 repeats line 3 (each direction once)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,-90,0\n90,-90,0\n0,0,0\n0,90,0\n90,90,0\n",
     'is missing azimuth_deg 90.0, elevation_deg 0.0 (1 grid points missing; '
     'accepted: every azimuth at every elevation)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,-45,0\n0,0,0\n0,90,0\n",
     'has no samples at elevation_deg -90.0 (accepted: elevations covering -90 to 90, the whole sphere)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,-90,0\n90,-90,1\n0,90,0\n90,90,0\n",
     'elevation_deg -90.0 is a single direction but gain_dbi varies from 0.0 to 1.0 '
     '(accepted: the same gain_dbi for every azimuth at a pole)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n360,0,0\n",
     'line 2: azimuth_deg 360.0 is out of range (accepted: >= 0 and < 360; 360 is the same bearing as 0)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,95,0\n",
     'line 2: elevation_deg 95.0 is out of range (accepted: -90 to 90)'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,0,high\n",
     'line 2: gain_dbi "high" must be a number'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,0,nan\n",
     'line 2: gain_dbi nan must be a finite number'),
    ("azimuth_deg,elevation_deg,gain_dbi\n0,0\n",
     'line 2: has 2 values, the header has 3'),
    ("azimuth,elevation_deg,gain_dbi\n0,0,0\n",
     'line 1: column "azimuth" is not accepted (accepted columns: azimuth_deg, elevation_deg, gain_dbi)'),
    ("azimuth_deg,elevation_deg\n0,0\n",
     'line 1: needs exactly one column gain_dbi (accepted columns: azimuth_deg, elevation_deg, gain_dbi)'),
    ("# nothing\n", 'is empty (accepted: a CSV with columns azimuth_deg, elevation_deg, gain_dbi)'),
])
def test_table_errors(tmp_path, content, message):
    p = tmp_path / "bad.csv"
    p.write_text(content)
    with pytest.raises(InputError) as exc:
        pt.load_pattern_table(p, field="stations[0].antenna.pattern_file")
    assert str(exc.value) == f'stations[0].antenna.pattern_file: "{p}" {message}'


def test_missing_table_file(tmp_path):
    p = tmp_path / "none.csv"
    with pytest.raises(InputError) as exc:
        pt.load_pattern_table(p)
    assert str(exc.value) == f'pattern_file: "{p}" does not exist'


def test_direction_components_may_be_passed_unpacked():
    d = pt.direction_in_antenna_frame(3.0, 4.0, 1.0, azimuth_deg=20.0, polarisation="horizontal")
    a = pt.pattern_gain_dbi("half-wave-dipole", d)
    b = pt.pattern_gain_dbi("half-wave-dipole", *d)
    assert a == b


# ----------------------------------------------------------------- beam: the ground under it

def test_beam_downward_floor_straight_down_and_its_taper():
    """Straight down the beam model gives half its peak gain (-3 dB), not the front-to-back floor; the
    floor tapers as sin^2 of the depression and never touches the upper hemisphere."""
    pat = pt.make_pattern("beam", **BEAM)
    g0 = 10 ** (8.0 / 10)
    down = float(pat.gain(pt.direction_from_angles(0.0, -90.0)))
    assert down == pytest.approx(g0 * pt.DOWNWARD_FLOOR_FRACTION, rel=1e-12)
    assert down > g0 * 10 ** (-20.0 / 10)                                   # above the F/B floor
    back_down = float(pat.gain(pt.direction_from_angles(180.0, -40.0)))
    assert back_down == pytest.approx(g0 * 0.5 * math.sin(math.radians(40.0)) ** 2, rel=1e-12)
    up = float(pat.gain(pt.direction_from_angles(180.0, 40.0)))
    assert up == pytest.approx(g0 * 10 ** (-20.0 / 10), rel=1e-12)         # upper rear: F/B floor only
    assert float(pat.gain(pt.direction_from_angles(180.0, 0.0))) == pytest.approx(g0 / 100, rel=1e-12)


def test_beam_downward_floor_bounds_a_two_element_array():
    """Closed form (Balanis, Antenna Theory, 4th ed., sec. 6.2 two-element array and pattern
    multiplication, from memory; sec. 4.6 half-wave element): two horizontal half-wave elements lambda/4
    apart along the boom, phased for endfire with a rear null, |AF|^2 normalised to its forward maximum
    = cos^2((pi/4)(cos(theta) - 1)), theta from the boom axis. Below the horizon, outside the forward
    quadrant, that array never exceeds the floor; straight down they are equal (1/2)."""
    delta = np.radians(np.linspace(0.5, 90.0, 180))        # depression below the horizon
    # vertical plane containing the boom (H-plane of the elements), toward the rear: theta = pi - delta
    af_rear = np.cos(np.pi / 4 * (np.cos(np.pi - delta) - 1)) ** 2
    floor = pt.beam_downward_floor(pt.direction_from_angles(180.0, -np.degrees(delta)))
    assert np.all(floor >= af_rear - 1e-12)
    # vertical plane across the boom (E-plane): AF^2 = 1/2 (theta = 90 deg), element factor of a half-wave
    # element at angle delta from its axis
    element = (np.cos(np.pi / 2 * np.cos(delta)) / np.sin(delta)) ** 2
    floor_side = pt.beam_downward_floor(pt.direction_from_angles(90.0, -np.degrees(delta)))
    assert np.all(floor_side >= 0.5 * element - 1e-12)
    assert float(pt.beam_downward_floor(pt.direction_from_angles(0.0, -90.0))) == pytest.approx(0.5)
