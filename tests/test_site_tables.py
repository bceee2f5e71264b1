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


@pytest.mark.parametrize("tilt", [0.0, 12.0])
def test_steep_table_never_below_and_within_its_bound(tilt):
    # 40 dB steps between neighbouring samples: the lift that covers the rounding of the weights is at most
    # 16 float32 spacings of the cell coordinate times the cell's gain differences, plus 2e-6 of its
    # largest corner, so at most about 1.3e-4 of the cell's largest gain above the exact value
    pat = _table(10.0, 5.0, deep=True)
    look = grid._UniformTable(pat.table)
    em = emitter(x=2.0, y=-3.0, h=4.0, pattern=pat, azimuth_deg=37.0, tilt_deg=tilt, polarisation="horizontal",
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    got = site.ratio_grid([em], PX, PY, HEIGHTS).ratio
    ref = direct_ratio([em], PX, PY, HEIGHTS)
    assert (got >= ref).all()
    # the excess, in gain, against the table's largest gain (10 dBi) over 4 pi R^2: bounded as stated
    bound = (16 * float(np.spacing(np.float32(look.n_col))) * 2 + 2e-6) * 10.0 * 2.0
    r2_min = None
    em_coef = np.array([100.0 * 2.56 / 50.0, 60.0 * 2.56 / 10.0])[:, None]
    for h in HEIGHTS:
        r2 = (PX - 2.0) ** 2 + (PY + 3.0) ** 2 + (h - 4.0) ** 2
        r2_min = r2 if r2_min is None else np.minimum(r2_min, r2)
    assert ((got - ref) <= em_coef * bound / (4 * math.pi * r2_min)).all()


def test_lookup_reproduces_the_samples_and_the_poles():
    # at the samples the bilinear value is the sample (patterns.table_gain); the lookup is within its lift
    pat = _table(10.0, 5.0)
    tab = pat.table
    look = grid._UniformTable(tab)
    az = np.radians(np.array([tab.azimuth_deg[3], tab.azimuth_deg[20]], dtype=np.float32))
    for j in (0, 7, tab.elevation_deg.size - 1):
        el = np.full(2, np.radians(tab.elevation_deg[j]), dtype=np.float32)
        col, ta = look.columns(az.astype(np.float32).copy())
        out = np.empty(2, dtype=np.float32)
        look.at(el, col, ta, out)
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
