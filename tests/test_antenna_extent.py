"""The radiating structure of named antenna kinds and beams, and distances to its nearest part.

Every expected distance is plane geometry written as an expression (textbook vector geometry, common
practice); element lengths are the textbook ones (Balanis, Antenna Theory, 4th ed., sec. 4.6: half-wave
dipole lambda/2; sec. 4.7: quarter-wave monopole lambda/4).
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.extent import (BEAM_DEFAULT_BOOM_WAVELENGTHS, BEAM_DEFAULT_SPAN_WAVELENGTHS,
                                   UNKNOWN_RADIUS_WAVELENGTHS, antenna_extent, nearest_distance_m)
from rfsafe.station.schema import Antenna

C0 = 299_792_458.0
F_HZ = 14.2e6
LAM = C0 / F_HZ


def _ant(**kw):
    base = dict(id="a", height_m=10.0)
    base.update(kw)
    return Antenna(**base)


def _d(extent, *pts):
    return nearest_distance_m(extent, np.array(pts, dtype=float))


def test_horizontal_half_wave_dipole_runs_broadside_to_its_azimuth():
    ext = antenna_extent(_ant(kind="half-wave-dipole"), F_HZ)
    # azimuth 0: main lobes north-south, so the wire runs east-west for lambda/4 each side
    d = _d(ext, (LAM / 4 + 1.0, 0.0, 10.0), (0.0, 3.0, 10.0), (0.0, 0.0, 6.0), (-LAM / 4 - 0.7, 0.0, 10.0))
    assert d == pytest.approx([1.0, 3.0, 4.0, 0.7], abs=1e-9)
    assert ext.known and ext.size_m == pytest.approx(LAM / 2)
    ext90 = antenna_extent(_ant(kind="half-wave-dipole", azimuth_deg=90.0), F_HZ)
    assert _d(ext90, (0.0, LAM / 4 + 2.0, 10.0)) == pytest.approx([2.0], abs=1e-9)   # now north-south


def test_vertical_dipole_and_a_place_below_its_lower_end():
    ext = antenna_extent(_ant(kind="half-wave-dipole", polarisation="vertical", height_m=12.0), F_HZ)
    assert _d(ext, (0.0, 0.0, 12.0 - LAM / 4 - 0.5), (2.0, 0.0, 12.0)) == pytest.approx([0.5, 2.0], abs=1e-9)


def test_quarter_wave_vertical_radials_only_when_elevated():
    up = antenna_extent(_ant(kind="quarter-wave-vertical", height_m=10.0), F_HZ)
    base = 10.0 - LAM / 8
    # 2 m beyond the tip of a radial, at the height of the radials
    assert _d(up, (LAM / 4 + 2.0, 0.0, base)) == pytest.approx([2.0], abs=1e-9)
    ground = antenna_extent(_ant(kind="quarter-wave-vertical", height_m=1.0), F_HZ)
    # base clipped to the ground; element from 0 to lambda/4; no radial disc: a person 3 m away at 1.5 m
    assert _d(ground, (3.0, 0.0, 1.5)) == pytest.approx([3.0], abs=1e-9)
    assert "base on the ground" in ground.basis


def test_beam_rectangle_of_declared_span_and_boom():
    ant = _ant(kind="beam", gain_dbi=8.0, element_span_m=10.0, boom_length_m=6.0, height_m=12.0)
    ext = antenna_extent(ant, F_HZ)
    assert ext.known and "10 m x 6 m" in ext.basis
    d = _d(ext, (8.0, 0.0, 12.0),          # 3 m beyond an element tip (elements run east-west)
           (0.0, 4.0, 12.0),               # 1 m beyond the front end of the boom (north)
           (4.0, -2.0, 3.0),               # straight below a point of the rectangle: the height difference
           (8.0, 7.0, 12.0))               # beyond a corner: sqrt(3^2 + 4^2)
    assert d == pytest.approx([3.0, 1.0, 9.0, 5.0], abs=1e-9)


def test_beam_without_dimensions_takes_a_stated_conservative_size():
    ext = antenna_extent(_ant(kind="beam", gain_dbi=8.0), F_HZ)
    assert not ext.known
    assert "element span not declared" in ext.basis and "boom length not declared" in ext.basis
    span, boom = BEAM_DEFAULT_SPAN_WAVELENGTHS * LAM, BEAM_DEFAULT_BOOM_WAVELENGTHS * LAM
    assert _d(ext, (span / 2 + 1.0, 0.0, 10.0), (0.0, boom / 2 + 1.0, 10.0)) == pytest.approx([1.0, 1.0])
    # at least a full-size half-wave element: never smaller than the textbook dipole
    assert span >= LAM / 2


def test_unknown_size_and_declared_aperture():
    other = antenna_extent(_ant(kind="other", gain_dbi=3.0), F_HZ)
    assert not other.known and "declare aperture_m" in other.basis
    r = UNKNOWN_RADIUS_WAVELENGTHS * LAM
    assert _d(other, (r + 2.0, 0.0, 10.0)) == pytest.approx([2.0])
    ap = antenna_extent(_ant(kind="other", gain_dbi=3.0, aperture_m=3.0), F_HZ)
    assert ap.known and _d(ap, (0.0, 0.0, 4.0)) == pytest.approx([6.0 - 1.5])


def test_nearest_part_is_never_farther_than_the_declared_position():
    """The structure contains (or surrounds) the declared position, so the nearest-part distance can only
    be the same or smaller: never optimistic against the old centre distance."""
    rng = np.random.default_rng(1)
    pts = rng.uniform(-30, 30, size=(200, 3)) + np.array([0.0, 0.0, 10.0])
    for kw in (dict(kind="half-wave-dipole"), dict(kind="short-dipole", polarisation="vertical"),
               dict(kind="quarter-wave-vertical"), dict(kind="beam", gain_dbi=7.0, azimuth_deg=33.0, tilt_deg=10.0),
               dict(kind="isotropic"), dict(kind="other", gain_dbi=2.0, aperture_m=2.0)):
        ext = antenna_extent(_ant(**kw), F_HZ)
        centre = np.linalg.norm(pts - np.array([0.0, 0.0, 10.0]), axis=1)
        assert np.all(nearest_distance_m(ext, pts) <= centre + 1e-9), kw
        assert math.isfinite(ext.size_m) and ext.basis


def test_farthest_part_from_the_declared_position():
    """Reach of each structure from its declared position (plane geometry): a half-wave dipole lambda/4,
    a beam rectangle half its diagonal, an elevated ground plane's radial tip sqrt((lambda/4)^2 +
    (lambda/8)^2)."""
    from rfsafe.antenna.extent import farthest_distance_m

    c = (0.0, 0.0, 10.0)
    assert farthest_distance_m(antenna_extent(_ant(kind="half-wave-dipole"), F_HZ), c) == pytest.approx(LAM / 4)
    beam = antenna_extent(_ant(kind="beam", gain_dbi=7.0, element_span_m=10.0, boom_length_m=6.0), F_HZ)
    assert farthest_distance_m(beam, c) == pytest.approx(math.hypot(5.0, 3.0))
    gp = antenna_extent(_ant(kind="quarter-wave-vertical"), F_HZ)
    assert farthest_distance_m(gp, c) == pytest.approx(math.hypot(LAM / 4, LAM / 8))


def test_site_grid_flags_the_near_field_of_the_beam_elements():
    """On a site grid a beam's near field is lambda/2pi from the nearest part of its structure (its declared
    span and boom): a point just inside lambda/2pi of the element tip is flagged, one just outside is not,
    though both are farther than lambda/2pi from the declared position."""
    import tomllib
    from pathlib import Path

    from rfsafe.site import load_site, ratio_grid
    from rfsafe.site.assess import site_emitters

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "event_field_day.toml"
    ems, _, _ = site_emitters(load_site(demo))
    beam = [e for e in ems if e.transmitter == "HF CW" and e.configuration == "20m-cw"]
    (e,) = beam
    lam = C0 / e.freq_hz
    assert e.near_field_m == pytest.approx(lam / (2 * math.pi))
    (ant,) = [a for s in tomllib.loads(demo.read_text())["stations"] if s["name"] == "HF CW" for a in s["antennas"]]
    span, boom = ant["element_span_m"], ant["boom_length_m"]
    # tip of the reflector at the beam's height: right of the boom's rear end (azimuth 70 deg)
    a = math.radians(e.azimuth_deg)
    fwd, right = np.array([math.sin(a), math.cos(a)]), np.array([math.cos(a), -math.sin(a)])
    tip = np.array([e.x_m, e.y_m]) - fwd * boom / 2 + right * span / 2
    pts = [tip + right * (0.98 * lam / (2 * math.pi)), tip + right * (1.02 * lam / (2 * math.pi))]
    grid = ratio_grid(beam, [p[0] for p in pts], [p[1] for p in pts], [e.height_m])
    assert grid.near_field.tolist() == [True, False]


def test_the_same_antenna_and_frequency_give_the_same_extent_object():
    # shared so that its prepared geometry serves every evaluation (the remedies re-evaluate dozens of times);
    # another frequency or any changed key gives another structure, equal to one made afresh
    from rfsafe.antenna.extent import _antenna_extent, extent_key

    ant = _ant(kind="half-wave-dipole", azimuth_deg=30.0)
    ext = antenna_extent(ant, F_HZ)
    assert antenna_extent(_ant(kind="half-wave-dipole", azimuth_deg=30.0), F_HZ) is ext
    with pytest.raises(ValueError):   # shared, so read-only: a change in place would reach later evaluations
        ext.segments_m[0, 0, 0] = 1.0
    assert extent_key(ext) == extent_key(_antenna_extent(ant, F_HZ, None))
    other = antenna_extent(ant, 2 * F_HZ)
    assert other is not ext and _d(other, (0.0, 0.0, 10.0 + LAM / 8)) == pytest.approx(LAM / 8)
    moved = antenna_extent(_ant(kind="half-wave-dipole", azimuth_deg=30.0, height_m=11.0), F_HZ)
    assert moved is not ext and extent_key(moved) != extent_key(ext)
