"""The site grid's regular-grid blocks (rfsafe.site.grid._Block, _BlockNearest) against point-by-point evaluation.

On a regular grid the kernel forms every sum of a term in x and a term in y from the two axes (one term per
column and one per row) and adds them once per point. IEEE 754 addition is commutative and ``a - b`` is
``a + (-b)`` (IEEE 754-2008 sec. 5.4.1 and 6.3: the same rounded result; common practice), so the results
must be the same bits as the same points evaluated one by one in any order: checked against the kernel on
the same points shuffled (which are no grid), and the nearest-part distances against
rfsafe.antenna.extent.NearestPart in single precision (clamped projections, textbook vector geometry).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rfsafe import site
from rfsafe.antenna import patterns as pt
from rfsafe.antenna.extent import Extent, NearestPart, structure_parts
from rfsafe.site import grid
from test_site import emitter

GX = np.linspace(-20.0, 30.0, 53)
GY = np.linspace(-25.0, 18.0, 41)
HEIGHTS = (0.5, 1.0, 1.7, 2.0, 9.0)


def _table():
    az = np.arange(0.0, 360.0, 10.0)
    el = np.arange(-90.0, 90.1, 5.0)
    A, E = np.meshgrid(np.radians(az), np.radians(el))
    gain = 6.0 * np.cos(A / 2) ** 2 * np.cos(E) - 12.0
    gain[0], gain[-1] = gain[0, 0], gain[-1, 0]
    return pt.make_pattern("table", table=pt.PatternTable(azimuth_deg=az, elevation_deg=el, gain_dbi=gain))


PATTERNS = {
    "isotropic": (pt.make_pattern("isotropic"), "vertical"),
    "dipole h": (pt.make_pattern("half-wave-dipole"), "horizontal"),
    "dipole v": (pt.make_pattern("half-wave-dipole"), "vertical"),
    "short dipole": (pt.make_pattern("short-dipole"), "horizontal"),
    "quarter-wave": (pt.make_pattern("quarter-wave-vertical"), "vertical"),
    "beam": (pt.make_pattern("beam", peak_gain_dbi=8.0, front_to_back_db=20.0, beamwidth_h_deg=66.0,
                             beamwidth_v_deg=40.0), "horizontal"),
    "table": (_table(), "horizontal"),
}

EXTENTS = {   # structures relative to the centre of radiation, invented, one of each kind of part
    "point": None,
    "segment h": Extent(segments_m=np.array([[[-5.3, 0.4, 0.0], [5.1, -0.2, 0.0]]])),
    "segment v": Extent(segments_m=np.array([[[0.0, 0.0, -2.6], [0.0, 0.0, 2.6]]])),
    "segment tilted": Extent(segments_m=np.array([[[-3.0, 1.0, -1.0], [2.0, -1.5, 2.2]]])),
    "vertical with radials": Extent(segments_m=np.array([[[0.0, 0.0, -2.6], [0.0, 0.0, 2.6]]]),
                                    discs=((np.array([0.0, 0.0, -2.6]), 5.2),)),
    "rectangle": Extent(rectangles=((np.zeros(3), np.array([0.6, 0.8, 0.0]), np.array([0.8, -0.6, 0.0]), 3.0, 5.5),)),
    "rectangle tilted": Extent(rectangles=((np.zeros(3), np.array([0.6 * math.cos(0.2), 0.8 * math.cos(0.2),
                                                                   math.sin(0.2)]),
                                            np.array([0.8, -0.6, 0.0]), 3.0, 5.5),)),
    "sphere": Extent(spheres=((np.array([0.3, -0.2, 0.1]), 2.6),)),
}


def _emitters(pattern, pol, extent, tilt, x=1.3, y=-2.2, h=6.0, az=37.0):
    em = emitter(x=x, y=y, h=h, pattern=pattern, azimuth_deg=az, tilt_deg=tilt, polarisation=pol,
                 power=(100.0, 60.0), limit=(50.0, 10.0), f=2.56)
    em = type(em)(**{**em.__dict__, "near_field_m": 3.4, "extent": extent})
    # a second configuration of the same transmitter, and a second transmitter
    em2 = type(em)(**{**em.__dict__, "configuration": "c2", "power_w": (30.0, 90.0)})
    em3 = type(em)(**{**em.__dict__, "transmitter": "other", "x_m": -7.0, "y_m": 4.0, "azimuth_deg": 200.0})
    return [em, em2, em3]


def test_grid_axes_found_only_for_a_grid_bit_for_bit():
    xx, yy = np.meshgrid(GX, GY)
    axes = grid._grid_axes(xx.ravel(), yy.ravel())
    assert axes is not None and np.array_equal(axes[0], GX) and np.array_equal(axes[1], GY)
    assert grid._grid_axes(xx.T.ravel().copy(), yy.T.ravel().copy()) is None          # column by column
    perm = np.random.default_rng(3).permutation(xx.size)
    assert grid._grid_axes(xx.ravel()[perm], yy.ravel()[perm]) is None
    x = xx.ravel().copy()
    x[np.flatnonzero(x == GX[0])[5]] = np.nextafter(GX[0], 0.0)                          # one point off by an ulp
    assert grid._grid_axes(x, yy.ravel()) is None
    gx0 = np.array([-1.0, 0.0, 1.0])
    xx0, yy0 = np.meshgrid(gx0, GY)
    x0 = xx0.ravel().copy()
    x0[4] = -0.0                                       # -0.0 == 0.0 but not the same bits
    assert grid._grid_axes(x0, yy0.ravel()) is None


@pytest.mark.parametrize("chunk", [16384, 200, 20])   # whole rows; several rows; pieces of a row
@pytest.mark.parametrize("tilt", [0.0, 7.0])
@pytest.mark.parametrize("kind", list(PATTERNS))
def test_grid_blocks_are_the_points_one_by_one(kind, tilt, chunk):
    pattern, pol = PATTERNS[kind]
    xx, yy = np.meshgrid(GX, GY)
    x, y = xx.ravel(), yy.ravel()
    perm = np.random.default_rng(5).permutation(x.size)
    inv = np.argsort(perm)
    for ext_name in ("point", "segment h", "rectangle tilted", "vertical with radials"):
        ems = _emitters(pattern, pol, EXTENTS[ext_name], tilt)
        on_grid = site.ratio_grid(ems, x, y, HEIGHTS, chunk_points=chunk)
        loose = site.ratio_grid(ems, x[perm], y[perm], HEIGHTS, chunk_points=chunk)
        assert np.array_equal(on_grid.ratio, loose.ratio[:, inv], equal_nan=True), (kind, ext_name)
        assert np.array_equal(on_grid.worst_height_m, loose.worst_height_m[:, inv]), (kind, ext_name)
        assert np.array_equal(on_grid.near_field, loose.near_field[inv]), (kind, ext_name)
    names_g, per_g = site.transmitter_ratios(ems, x, y, HEIGHTS, chunk_points=chunk)
    names_l, per_l = site.transmitter_ratios(ems, x[perm], y[perm], HEIGHTS, chunk_points=chunk)
    assert names_g == names_l and np.array_equal(per_g, per_l[:, :, inv], equal_nan=True)


@pytest.mark.parametrize("name", [n for n in EXTENTS if n != "point"])
def test_block_nearest_part_is_extent_nearest_part_in_single_precision(name):
    ext = EXTENTS[name]
    parts = structure_parts(ext)
    rows = GY[3:17]
    blk = grid._Block(gx=GX, gy=rows)
    flat = grid._Block(px=blk.px.copy(), py=blk.py.copy())
    ref = NearestPart(ext, blk.px, blk.py, dtype=np.float32, parts=parts)
    zs = np.array([[h] for h in (-3.0, 0.0, 0.5, 2.6, 9.0)], dtype=np.float32)
    for b in (blk, flat):
        near = grid._BlockNearest(grid._NearestPlan(parts), b)
        got_all = near.squared_m2(zs)
        want_all = np.broadcast_to(ref.squared_m2(zs), got_all.shape)
        assert got_all.dtype == np.float32 and np.array_equal(got_all, want_all)
        for z in zs[:, 0]:
            got, want = near.squared_m2(z), ref.squared_m2(z)
            assert np.array_equal(got, np.broadcast_to(want, got.shape))
            got[0] = -1.0                                   # a fresh array: nothing stored is handed out
        assert np.array_equal(near.squared_m2(zs[2, 0]), np.broadcast_to(ref.squared_m2(zs[2, 0]), (b.size,)))


@settings(max_examples=40, deadline=None)
@given(kind=st.sampled_from(list(PATTERNS)), ext=st.sampled_from(list(EXTENTS)),
       tilt=st.sampled_from([0.0, 3.0, -40.0]),
       x=st.floats(-30.0, 30.0), y=st.floats(-30.0, 30.0), h=st.floats(0.0, 15.0), az=st.floats(-360.0, 360.0),
       nx=st.integers(2, 40), ny=st.integers(2, 9), chunk=st.integers(1, 300), seed=st.integers(0, 2 ** 31))
def test_any_grid_is_its_points_one_by_one(kind, ext, tilt, x, y, h, az, nx, ny, chunk, seed):
    # property: the grid path gives the same bits as the points taken one by one, for any antenna, grid and block
    rng = np.random.default_rng(seed)
    gx = np.sort(rng.uniform(-25.0, 25.0, nx))
    gy = np.sort(rng.uniform(-25.0, 25.0, ny))[::-1].copy()
    xx, yy = np.meshgrid(gx, gy)
    pattern, pol = PATTERNS[kind]
    ems = _emitters(pattern, pol, EXTENTS[ext], tilt, x=x, y=y, h=h, az=az)
    a = site.ratio_grid(ems, xx, yy, HEIGHTS, chunk_points=chunk)
    perm = rng.permutation(xx.size)
    b = site.ratio_grid(ems, xx.ravel()[perm], yy.ravel()[perm], HEIGHTS, chunk_points=chunk)
    inv = np.argsort(perm)
    assert np.array_equal(a.ratio, b.ratio[:, inv], equal_nan=True)
    assert np.array_equal(a.worst_height_m, b.worst_height_m[:, inv])
    assert np.array_equal(a.near_field, b.near_field[inv])


@pytest.mark.parametrize("heights", [(1.0,), (1.0, 2.0), (2.0, 1.0, 2.0), (0.5, 1.0, 1.5, 2.0, 9.0), (3.0, 3.0, 3.0)])
def test_worst_height_is_the_first_height_of_the_largest_total(heights):
    # ratio_grid finds the worst height by a running mask; it must be numpy's argmax (the first of equal
    # largest totals), here against per-height runs of the same kernel (points as centres without a
    # near-field distance: the peak-gain points, which depend on the set of heights, stay out)
    ems = [type(em)(**{**em.__dict__, "near_field_m": 0.0, "extent": None})
           for em in _emitters(*PATTERNS["table"], None, 7.0) + _emitters(*PATTERNS["beam"], None, 0.0, h=2.0)]
    xx, yy = np.meshgrid(GX, GY)
    got = site.ratio_grid(ems, xx.ravel(), yy.ravel(), heights)
    per_h = np.stack([site.ratio_grid(ems, xx.ravel(), yy.ravel(), (h,)).ratio for h in heights])
    assert np.array_equal(got.ratio, per_h.max(axis=0))
    assert np.array_equal(got.worst_height_m, np.array(heights)[np.argmax(per_h, axis=0)])
