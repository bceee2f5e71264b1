"""The site grid's pattern-table paths (rfsafe.site.grid._UniformTable) against the direct evaluation.

Reference: the far-field prediction S = P G F / (4 pi R^2) (OET Bulletin 65 sec. 2) with the gain of
patterns.table_gain (bilinear on the linear gain, Numerical Recipes sec. 3.6, common practice), written
out in float64 by tests.test_site.direct_ratio. The grid's single-precision lookup must never be below it
and may be above it by no more than its stated rounding bound.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rfsafe import site
from rfsafe.antenna import patterns as pt
from rfsafe.site import grid
from test_site import direct_ratio, emitter

RNG = np.random.default_rng(11)
PX = np.concatenate([RNG.uniform(-40, 40, 4000), [2.0, 2.0, 2.0 + 1e-9]])   # and straight above/below
PY = np.concatenate([RNG.uniform(-40, 40, 4000), [-3.0, -3.0, -3.0]])
HEIGHTS = (0.5, 1.0, 1.5, 2.0, 3.9, 6.0, 30.0)   # 0.1 m below the antenna: beyond MIN_FAR_FIELD_DIST_M


def _table(step_az, step_el, *, deep=False, first_az=0.0):
    """An invented table; ``deep``: nulls 40 dB down beside a +10 dBi lobe (steep cells, where the
    rounding of the weights matters most)."""
    az = np.arange(first_az, 360.0, step_az)
    el = np.linspace(-90.0, 90.0, int(round(180.0 / step_el)) + 1)
    A, E = np.meshgrid(np.radians(az), np.radians(el))
    gain = 6.0 * np.cos(A / 2) ** 2 * np.cos(E) - 12.0 + 3.0 * np.sin(3 * A) * np.cos(2 * E)
    if deep:
        gain = np.where((np.arange(az.size) % 3 == 1)[None, :], -30.0, 10.0) * np.cos(E) ** 2
    gain[0], gain[-1] = gain[0, 0], gain[-1, 0]          # one gain at each pole
    return pt.make_pattern("table", table=pt.PatternTable(azimuth_deg=az, elevation_deg=el, gain_dbi=gain))


def _rel(pattern, tilt, az):
    em = emitter(x=2.0, y=-3.0, h=4.0, pattern=pattern, azimuth_deg=az, tilt_deg=tilt, polarisation="horizontal",
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    got = site.ratio_grid([em], PX, PY, HEIGHTS).ratio
    ref = direct_ratio([em], PX, PY, HEIGHTS)
    ok = np.isfinite(ref)
    assert np.array_equal(np.isfinite(got), ok)        # R = 0 only where the reference has it too
    return got[ok] / ref[ok] - 1.0


@pytest.mark.parametrize("step_az, step_el, first_az", [(10.0, 5.0, 0.0), (1.0, 1.0, 0.0), (15.0, 2.0, 7.5),
                                                         (120.0, 90.0, 0.0)])
@pytest.mark.parametrize("tilt", [0.0, 7.0, -35.0, 90.0])
@pytest.mark.parametrize("az", [0.0, 37.0, 359.9, -200.0, 725.0])
def test_table_never_below_the_direct_evaluation(step_az, step_el, first_az, tilt, az):
    pat = _table(step_az, step_el, first_az=first_az)
    assert grid._UniformTable.fits(pat.table)
    rel = _rel(pat, tilt, az)
    # never below; above by at most the lift that bounds the rounding (here under 5e-4 = 0.002 dB; gains
    # are given to 0.01 dB = 2.3e-3 at best)
    assert rel.min() >= 0.0 and rel.max() <= 5e-4


def _lift_bound(look, gmax_lin):
    """Largest excess of ``look`` over the exact bilinear value, for a table whose largest linear gain is
    ``gmax_lin``, in G / (4 pi): its lift (the weight error bounds wa, we in cells times the largest slope of
    a cell, |d01| + |f| and |e| + |f|, at most 3 gmax each, plus the rounding allowance; grid._UniformTable)
    and the rounding itself, which may also fall upwards (at most the allowance again)."""
    wa = (grid._TABLE_WEIGHT_SPACINGS * float(np.spacing(np.float32(look.n_col)))
          + grid._TABLE_ANGLE_ERR_RAD / math.radians(look.da))
    we = (grid._TABLE_WEIGHT_SPACINGS * float(np.spacing(np.float32(look.n_rows)))
          + grid._TABLE_ANGLE_ERR_RAD / math.radians(look.de))
    return ((wa + we) * 3.0 + 2.0 * grid._TABLE_F32_REL) * gmax_lin / (4 * math.pi)


def _excess_within_the_lift(pat, em, px, py, heights):
    """The kernel against the float64 reference: never below; above by at most the largest lift (and the
    float32 rounding of the final products, a few ulps of 6e-8 of the value)."""
    look = grid._UniformTable(pat.table)
    got = site.ratio_grid([em], px, py, heights).ratio
    with np.errstate(divide="ignore", invalid="ignore"):   # R = 0 at the antenna: left out below
        ref = direct_ratio([em], px, py, heights)
    r2_min = np.min([(px - em.x_m) ** 2 + (py - em.y_m) ** 2 + (h - em.height_m) ** 2 for h in heights], axis=0)
    ok = r2_min > grid.MIN_FAR_FIELD_DIST_M ** 2 * 4     # the near-field override (peak gain) left out
    coef = em.ratio_coefficient_m2[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):     # R = 0 at the antenna: left out (ok)
        bound = coef * _lift_bound(look, pat.table._gain_lin.max()) / r2_min + 1e-6 * ref
    assert (got[:, ok] >= ref[:, ok]).all()
    assert ((got - ref)[:, ok] <= bound[:, ok]).all()


@pytest.mark.parametrize("tilt", [0.0, 12.0])
def test_steep_table_never_below_and_within_its_bound(tilt):
    # 40 dB steps between neighbouring samples, where the rounding of the weights matters most
    pat = _table(10.0, 5.0, deep=True)
    em = emitter(x=2.0, y=-3.0, h=4.0, pattern=pat, azimuth_deg=37.0, tilt_deg=tilt, polarisation="horizontal",
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    _excess_within_the_lift(pat, em, PX, PY, HEIGHTS)


@settings(max_examples=60, deadline=None)
@given(step_az=st.sampled_from([1.0, 5.0, 10.0, 15.0, 30.0, 45.0, 120.0]),
       step_el=st.sampled_from([1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 90.0]),
       first_frac=st.floats(0.0, 0.99), deep=st.booleans(), seed=st.integers(0, 2 ** 31),
       az=st.floats(-720.0, 720.0), tilt=st.floats(-90.0, 90.0), h=st.floats(0.0, 30.0), simd=st.booleans())
def test_any_uniform_table_is_never_below_the_float64_lookup(step_az, step_el, first_frac, deep, seed, az, tilt, h,
                                                            simd):
    # property: whatever the table, orientation and points, and with either kind of float32 angles (numpy's
    # arctan or the rational one), the kernel's single-precision lookup is never below the float64 bilinear
    # value of patterns.table_gain (Numerical Recipes sec. 3.6, common practice) in the far-field prediction
    # (OET Bulletin 65 sec. 2), and above it by at most its lift
    rng = np.random.default_rng(seed)
    azs = np.arange(first_frac * step_az, 360.0, step_az)
    els = np.linspace(-90.0, 90.0, int(round(180.0 / step_el)) + 1)
    gain = rng.uniform(-30.0, 10.0, (els.size, azs.size)) if deep else rng.uniform(-3.0, 3.0, (els.size, azs.size))
    gain[0], gain[-1] = gain[0, 0], gain[-1, 0]
    pat = pt.make_pattern("table", table=pt.PatternTable(azimuth_deg=azs, elevation_deg=els, gain_dbi=gain))
    assert grid._UniformTable.fits(pat.table)
    px = np.concatenate([rng.uniform(-40, 40, 600), rng.uniform(-1, 1, 100) + 2.0, [2.0]])
    py = np.concatenate([rng.uniform(-40, 40, 600), rng.uniform(-1, 1, 100) - 3.0, [-3.0]])
    em = emitter(x=2.0, y=-3.0, h=h, pattern=pat, azimuth_deg=az, tilt_deg=tilt, polarisation="horizontal",
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    saved = grid._ANGLES
    grid._ANGLES = grid._Angles(simd=simd)
    try:
        _excess_within_the_lift(pat, em, px, py, (0.5, 1.0, 1.7, 2.0, 12.0))
    finally:
        grid._ANGLES = saved


@pytest.mark.parametrize("simd", [True, False])
def test_angles_within_their_stated_bound(simd):
    # the kernel's float32 angles (grid._Angles: numpy's arctan2 and arctan, or the rational arctan through
    # the half-angle identity) against numpy's float64 arctan2 (common practice) on the same float32 inputs:
    # within half the error the lift allows for (_TABLE_ANGLE_ERR_RAD), and the cell coordinates within the
    # weight bound
    rng = np.random.default_rng(5)
    n = 400_000
    x = (rng.standard_normal(n) * 10 ** rng.uniform(-4, 4, n)).astype(np.float32)
    y = (rng.standard_normal(n) * 10 ** rng.uniform(-4, 4, n)).astype(np.float32)
    x[:4], y[:4] = [0.0, 1.0, -1.0, 0.0], [0.0, 0.0, 0.0, -2.0]
    xs, ys = x.astype(float), y.astype(float)
    angles = grid._Angles(simd=simd)
    bound = grid._TABLE_ANGLE_ERR_RAD
    exact = np.arctan2(ys, xs)
    az = angles.atan2(y, x)
    assert np.abs(az.astype(float) - exact).max() <= bound / 2
    # azimuth to cells: the cell coordinate col + ta against the exact one, modulo the table's columns
    look = grid._UniformTable(_table(10.0, 5.0, first_az=3.0).table)
    off = look.column_offset(37.0)
    col, ta = look.columns(az, off)
    want = np.degrees(exact) / look.da + float(off)
    col = col / look.n_rows                              # the column index (columns gives it times n_rows)
    d = (col + ta - want + look.n_az / 2) % look.n_az - look.n_az / 2
    rounding_rad = 4 * float(np.spacing(np.float32(look.n_col))) * math.radians(look.da)   # cells -> rad
    assert np.abs(d).max() * math.radians(look.da) <= bound / 2 + rounding_rad
    assert (col >= 1).all() and (col <= look.n_col - 1).all() and (ta >= 0).all() and (ta <= 1).all()
    # elevation atan(y / |x|) for |x| > 0 (the kernel's horizontal distances are at least 1e-15 m)
    den = np.maximum(np.abs(x), np.float32(1e-15))
    el = angles.atan_ratio(y.copy(), den)
    assert np.abs(el.astype(float) - np.arctan2(ys, den.astype(float))).max() <= bound / 2
    col_h = angles.atan_ratio(y[:1000].reshape(1, -1).copy(), den[:1000])           # broadcast as the kernel does
    assert np.array_equal(col_h[0], angles.atan_ratio(y[:1000].copy(), den[:1000]))


def test_numpy_reports_its_arctan_as_the_kernel_expects():
    # the choice between numpy's arctan and the rational function asks numpy which code runs; it must
    # answer a bool without raising, whatever numpy and processor
    assert grid._simd_arctan() in (True, False)


@pytest.mark.parametrize("tilt", [0.0, 12.0])
def test_rational_angles_never_below_either(tilt, monkeypatch):
    # the rational arctan (machines where numpy's float32 arctan is a scalar loop) through the same kernel
    monkeypatch.setattr(grid, "_ANGLES", grid._Angles(simd=False))
    pat = _table(10.0, 5.0, deep=True)
    em = emitter(x=2.0, y=-3.0, h=4.0, pattern=pat, azimuth_deg=37.0, tilt_deg=tilt, polarisation="horizontal",
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    _excess_within_the_lift(pat, em, PX, PY, HEIGHTS)


def test_lookup_reproduces_the_samples_and_the_poles():
    # at the samples the bilinear value is the sample (patterns.table_gain); the lookup is within its lift.
    # Directions are given as the kernel gives them: azimuth and elevation in radians (float32).
    pat = _table(10.0, 5.0)
    tab = pat.table
    look = grid._UniformTable(tab)
    az = np.radians(np.array([tab.azimuth_deg[3], tab.azimuth_deg[20]])).astype(np.float32)
    for j in (0, 7, tab.elevation_deg.size - 1):
        el = np.full(2, math.radians(tab.elevation_deg[j]), dtype=np.float32)
        col, ta = look.columns(az.copy(), look.column_offset())
        out = np.empty(2, dtype=np.float32)
        look.at_elevation(el, col, ta, out)
        want = tab._gain_lin[j, [3, 20]] / (4 * math.pi)
        assert (out >= want).all() and np.allclose(out, want, rtol=5e-4, atol=0)


def test_tables_off_a_uniform_grid_use_the_searched_lookup():
    # non-uniform elevations: not the uniform lookup; still the direct evaluation to single precision
    az = np.arange(0.0, 360.0, 10.0)
    el = np.array([-90.0, -40.0, -10.0, 0.0, 5.0, 20.0, 60.0, 90.0])
    A, E = np.meshgrid(np.radians(az), np.radians(el))
    gain = 6.0 * np.cos(A / 2) ** 2 * np.cos(E) - 12.0
    gain[0], gain[-1] = gain[0, 0], gain[-1, 0]
    pat = pt.make_pattern("table", table=pt.PatternTable(azimuth_deg=az, elevation_deg=el, gain_dbi=gain))
    assert not grid._UniformTable.fits(pat.table)
    for tilt in (0.0, 10.0):
        rel = _rel(pat, tilt, 37.0)
        assert np.abs(rel).max() <= 1e-5
