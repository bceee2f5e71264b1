"""The site grid judges a point by its distance to the nearest part of each antenna, as a station does.

A place near an antenna is judged by its distance to the nearest part of the antenna, never to a
reference point (47 CFR 1.1307(b)(3): the separation is measured from any part of the radiating
structure). The site grid must therefore never be below the station evaluation of the same antenna,
power and place: checked as a property over random antennas of every kind and size, and on examples
named by their geometry (distances are plane geometry written as expressions: textbook vector
geometry, common practice; element lengths are the textbook ones, Balanis, Antenna Theory, 4th ed.,
sec. 4.6 and 4.7).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rfsafe import site
from rfsafe.antenna import patterns as pt
from rfsafe.antenna.extent import Extent, NearestPart, antenna_extent, nearest_distance_m
from rfsafe.station.schema import Antenna

C0 = 299_792_458.0
# The kernel's per-height arithmetic is single precision (eps 6e-8): a few operations stay below 1e-5.
RTOL = 1e-5
HEIGHTS = (0.5, 1.0, 1.5, 2.0)

SITE = """title = "Nearest-part test site"
evaluation_date = 2026-07-18
standard = "{standard}"
ground_reflection = "{ground}"
heights_m = {heights}
grid_spacing_m = 1.0
boundary = [[-60.0, -60.0], [60.0, -60.0], [60.0, 60.0], [-60.0, 60.0]]

[[stations]]
name = "S"
file = "station.toml"
x_m = {sx}
y_m = {sy}
"""

STATION = """title = "Nearest-part test station"
evaluation_date = 2026-07-18
standard = "{standard}"
ground_reflection = "{ground}"

[[transmitters]]
id = "tx"
pep_w = {pep}

[[feedlines]]
id = "line"
cable = "rg-213"
length_m = 10.0

[[antennas]]
id = "ant"
{antenna}

[[configurations]]
id = "c"
freq_mhz = {freq_mhz}
transmitter = "tx"
feedline = "line"
antenna = "ant"
mode = "{mode}"
"""

PLACE = """
[[places]]
label = "p{i}"
x_m = {x}
y_m = {y}
height_m = {h0}
body_heights_m = {heights}
environment = "{env}"
"""


def _toml_list(v) -> str:
    return "[" + ", ".join(repr(float(x)) for x in v) + "]"


def _station_and_site(tmp_path, antenna: str, places, *, freq_mhz=14.2, pep=100.0, mode="fm", standard="fcc",
                      ground="full", sx=0.0, sy=0.0, heights=HEIGHTS):
    """Station evaluation of ``places`` and the site grid of the same station at the same points.

    Returns a list of (station ratio, site ratio, station says inside the near field, site flags it).
    """
    from rfsafe.assess import assess
    from rfsafe.site import load_site, site_emitters
    from rfsafe.site.constants import ENVIRONMENTS
    from rfsafe.station import load_station

    places_toml = "".join(PLACE.format(i=i, x=x, y=y, h0=heights[0], heights=_toml_list(heights), env=env)
                          for i, (x, y, env) in enumerate(places))
    common = dict(standard=standard, ground=ground)
    (tmp_path / "station.toml").write_text(
        STATION.format(antenna=antenna, freq_mhz=freq_mhz, pep=pep, mode=mode, **common) + places_toml)
    (tmp_path / "site.toml").write_text(SITE.format(heights=_toml_list(heights), sx=sx, sy=sy, **common))
    res = assess(load_station(tmp_path / "station.toml"))
    ems, _, _ = site_emitters(load_site(tmp_path / "site.toml"))
    px = np.array([x + sx for x, _, _ in places])
    py = np.array([y + sy for _, y, _ in places])
    grid = site.ratio_grid(ems, px, py, heights)
    out = []
    for k, pr in enumerate(res.places):
        (ex,) = pr.exposures
        e = ENVIRONMENTS.index(pr.environment)
        out.append((ex.exposure_ratio, float(grid.ratio[e, k]), ex.inside_near_field, bool(grid.near_field[k])))
    return out


# ----------------------------------------------------------------- antennas of every kind and size

def _dipole(draw):
    kind = draw(st.sampled_from(["half-wave-dipole", "short-dipole"]))
    pol = draw(st.sampled_from(["horizontal", "vertical"]))
    return f'kind = "{kind}"\npolarisation = "{pol}"\nuse_pattern = {draw(st.booleans())!s}'.replace(
        "True", "true").replace("False", "false"), pol


def _vertical(draw):
    return 'kind = "quarter-wave-vertical"\npolarisation = "vertical"\nuse_pattern = true', "vertical"


def _beam(draw):
    lines = ['kind = "beam"', "gain_dbi = 8.0", "front_to_back_db = 18.0", "beamwidth_h_deg = 64.0",
             "beamwidth_v_deg = 60.0", f"use_pattern = {'true' if draw(st.booleans()) else 'false'}"]
    if draw(st.booleans()):
        lines.append(f"element_span_m = {draw(st.floats(2.0, 14.0)):.3f}")
    if draw(st.booleans()):
        lines.append(f"boom_length_m = {draw(st.floats(1.0, 12.0)):.3f}")
    pol = draw(st.sampled_from(["horizontal", "vertical"]))
    lines.append(f'polarisation = "{pol}"')
    return "\n".join(lines), pol


def _unknown_size(draw):
    kind = draw(st.sampled_from(["isotropic", "other"]))
    lines = [f'kind = "{kind}"'] + (["gain_dbi = 6.0"] if kind == "other" else [])
    if draw(st.booleans()):
        lines.append(f"aperture_m = {draw(st.floats(0.2, 3.0)):.3f}")
    return "\n".join(lines), "vertical"


@st.composite
def antennas(draw):
    text, _ = draw(st.sampled_from([_dipole, _vertical, _beam, _unknown_size]))(draw)
    height = draw(st.floats(0.5, 14.0))
    az = draw(st.floats(0.0, 359.0))
    tilt = draw(st.sampled_from([0.0, 0.0, 10.0, -25.0]))
    x, y = draw(st.floats(-5.0, 5.0)), draw(st.floats(-5.0, 5.0))
    return (f"{text}\nx_m = {x:.3f}\ny_m = {y:.3f}\nheight_m = {height:.3f}\nazimuth_deg = {az:.2f}\n"
            f"tilt_deg = {tilt:g}")


@st.composite
def places(draw):
    n = draw(st.integers(1, 6))
    out = []
    for _ in range(n):
        r = draw(st.sampled_from([0.3, 1.0, 3.0, 8.0, 25.0])) * draw(st.floats(0.5, 2.0))
        b = draw(st.floats(0.0, 2 * math.pi))
        out.append((round(r * math.cos(b), 3) + 0.0137, round(r * math.sin(b), 3),
                    draw(st.sampled_from(["controlled", "uncontrolled"]))))
    return out


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                 HealthCheck.too_slow])
@given(antenna=antennas(), pts=places(), freq=st.sampled_from([3.6, 7.15, 14.2, 28.5, 50.2, 146.0, 435.0]),
       pep=st.floats(5.0, 1500.0), ground=st.sampled_from(["full", "none"]),
       shift=st.tuples(st.floats(-20.0, 20.0), st.floats(-20.0, 20.0)))
def test_site_grid_is_never_below_the_station_evaluation(tmp_path_factory, antenna, pts, freq, pep, ground, shift):
    """Property: for the same antenna, power and place, site grid ratio >= station ratio, and every place the
    station finds inside the near field is flagged on the grid."""
    from rfsafe.errors import InputError

    tmp = tmp_path_factory.mktemp("np")
    try:
        rows = _station_and_site(tmp, antenna, pts, freq_mhz=freq, pep=pep, ground=ground, sx=shift[0], sy=shift[1])
    except InputError as err:   # a random place can land on the antenna's own position: refused, not judged
        assert "must be away from the antenna" in str(err)
        return
    for station_ratio, site_ratio, station_near, site_near in rows:
        assert site_ratio >= station_ratio * (1 - RTOL), (antenna, pts, rows)
        assert site_near or not station_near


# ----------------------------------------------------------------- examples named by their geometry

def test_under_the_end_of_a_horizontal_dipole_the_distance_is_the_height_difference(tmp_path):
    # 14.2 MHz half-wave dipole at 8 m, wire east-west (azimuth 0): a place right below its east end,
    # lambda/4 = 5.28 m east of the centre, at 2 m is 6 m from the wire (not sqrt(5.28^2 + 6^2) = 7.99 m
    # from the centre). Inside lambda/2pi = 3.36 m? No: 6 m > 3.36 m, so the pattern counts.
    lam = C0 / 14.2e6
    rows = _station_and_site(tmp_path, 'kind = "half-wave-dipole"\nheight_m = 8.0\nuse_pattern = true',
                             [(lam / 4, 0.0, "uncontrolled")], heights=(2.0,))
    (station, grid, _, near), = rows
    assert grid == pytest.approx(station, rel=RTOL)
    assert not near
    from rfsafe.site import load_site, site_emitters

    (em,) = site_emitters(load_site(tmp_path / "site.toml"))[0]
    assert nearest_distance_m(em.extent, [lam / 4, 0.0, 2.0 - 8.0]) == pytest.approx(6.0, abs=1e-9)
    assert em.near_field_m == pytest.approx(lam / (2 * math.pi), rel=1e-9)


def test_beside_a_vertical_dipole_below_its_centre(tmp_path):
    # vertical half-wave dipole centred at 6 m, 14.2 MHz: lower end at 6 - 5.28 = 0.72 m. A place 2 m away
    # horizontally is 2 m from the element at every height between 0.72 and 2 m: inside lambda/2pi = 3.36 m,
    # so the peak gain counts (the element's null toward its axis does not hold there), at R = 2 m.
    rows = _station_and_site(tmp_path, 'kind = "half-wave-dipole"\npolarisation = "vertical"\nheight_m = 6.0\n'
                                       'use_pattern = true', [(2.0, 0.0, "uncontrolled")])
    (station, grid, st_near, near), = rows
    assert st_near and near
    assert grid == pytest.approx(station, rel=RTOL)
    from rfsafe.site import load_site, site_emitters

    em = site_emitters(load_site(tmp_path / "site.toml"))[0][0]
    k = em.ratio_coefficient_m2[1] * 10 ** (2.15 / 10) / (4 * math.pi * 2.0 ** 2)   # peak gain 2.15 dBi
    assert grid == pytest.approx(k, rel=1e-3)


def test_in_front_of_a_beam_under_its_declared_boom(tmp_path):
    # beam at 10 m, azimuth 90 (boom east-west), boom 8 m, span 10 m: a place 3 m east of the mast at 2 m is
    # under the boom, 8 m below it (not sqrt(3^2 + 8^2) = 8.54 m from the mast).
    rows = _station_and_site(tmp_path, 'kind = "beam"\ngain_dbi = 8.0\nfront_to_back_db = 18.0\n'
                                       'beamwidth_h_deg = 64.0\nbeamwidth_v_deg = 60.0\nuse_pattern = true\n'
                                       'element_span_m = 10.0\nboom_length_m = 8.0\nheight_m = 10.0\n'
                                       'azimuth_deg = 90.0', [(3.0, 0.0, "uncontrolled")], heights=(2.0,))
    (station, grid, _, _), = rows
    assert grid == pytest.approx(station, rel=RTOL)
    from rfsafe.site import load_site, site_emitters

    em = site_emitters(load_site(tmp_path / "site.toml"))[0][0]
    assert nearest_distance_m(em.extent, [3.0, 0.0, 2.0 - 10.0]) == pytest.approx(8.0, abs=1e-9)


def test_quarter_wave_vertical_on_the_ground_is_as_tall_as_a_quarter_wave(tmp_path):
    # 14.2 MHz vertical declared at 1.5 m: it stands on the ground, 0 .. lambda/4 = 5.28 m. A person 0.5 m from
    # it at 2 m height is 0.5 m from the element (the station and the grid agree, inside the near field).
    rows = _station_and_site(tmp_path, 'kind = "quarter-wave-vertical"\npolarisation = "vertical"\n'
                                       'height_m = 1.5\nuse_pattern = true', [(0.5, 0.0, "uncontrolled")])
    (station, grid, st_near, near), = rows
    assert st_near and near and grid == pytest.approx(station, rel=RTOL)


def test_a_point_on_the_antenna_is_finite_at_the_smallest_distance():
    # at the centre of radiation the far-field estimate is taken at MIN_FAR_FIELD_DIST_M with the peak
    # gain (as for a station's place), never NaN; flagged as near field
    from rfsafe.assess import MIN_FAR_FIELD_DIST_M

    from rfsafe.site.grid import MIN_FAR_FIELD_DIST_M as GRID_MIN

    assert GRID_MIN == MIN_FAR_FIELD_DIST_M
    em = site.SiteEmitter(transmitter="a", configuration="c", x_m=0.0, y_m=0.0, height_m=1.0,
                          pattern=pt.make_pattern("half-wave-dipole"), freq_hz=146e6, power_w=(100.0, 100.0),
                          limit_w_m2=(50.0, 10.0), polarisation="vertical", near_field_m=2.0)
    got = site.ratio_grid([em], [0.0, 1.0, 3.0], [0.0, 0.0, 0.0], (1.0, 2.0))
    peak = 10 ** (2.15 / 10)
    assert got.ratio[:, 0] == pytest.approx([100 / 50 * peak / (4 * math.pi * MIN_FAR_FIELD_DIST_M ** 2),
                                             100 / 10 * peak / (4 * math.pi * MIN_FAR_FIELD_DIST_M ** 2)],
                                            rel=1e-3)
    assert not np.isnan(got.ratio).any()
    # horizontal distance 1 m at height 1.0 m: 1 m < 2 m; at 3 m it is outside
    assert got.near_field.tolist() == [True, True, False]


def test_emitter_extent_moves_with_the_emitter():
    # the structure is kept relative to the centre of radiation: an emitter moved 30 m east (as a remedy
    # does) is judged from its moved elements
    import dataclasses

    ant = Antenna(id="a", kind="half-wave-dipole", height_m=8.0)
    ext = antenna_extent(ant, 14.2e6)
    from rfsafe.antenna.extent import shifted

    rel = shifted(ext, (0.0, 0.0, -8.0))
    em = site.SiteEmitter(transmitter="a", configuration="c", x_m=0.0, y_m=0.0, height_m=8.0,
                          pattern=pt.make_pattern("half-wave-dipole"), freq_hz=14.2e6, power_w=(100.0, 100.0),
                          limit_w_m2=(50.0, 10.0), near_field_m=3.36, extent=rel)
    moved = dataclasses.replace(em, x_m=30.0)
    a = site.ratio_grid([em], [5.0], [7.0], (1.5,)).ratio
    b = site.ratio_grid([moved], [35.0], [7.0], (1.5,)).ratio
    assert np.allclose(a, b, rtol=1e-6)


# ----------------------------------------------------------------- the one geometry, per point and per height

@settings(max_examples=50, deadline=None)
@given(kind=st.sampled_from(["half-wave-dipole", "quarter-wave-vertical", "beam", "other"]),
       pol=st.sampled_from(["horizontal", "vertical"]), tilt=st.sampled_from([0.0, 20.0]),
       height=st.floats(0.5, 12.0), az=st.floats(0.0, 359.0), z=st.floats(0.0, 15.0))
def test_nearest_part_per_height_agrees_with_a_brute_force_sample(kind, pol, tilt, height, az, z):
    """NearestPart (per-point parts once, per-height additions) against the minimum over a dense sample of
    points on the structure: never larger than the sample's minimum, and within the sample spacing of it."""
    kw = dict(gain_dbi=6.0) if kind in ("beam", "other") else {}
    ant = Antenna(id="a", kind=kind, height_m=height, azimuth_deg=az, tilt_deg=tilt, polarisation=pol, **kw)
    ext = antenna_extent(ant, 14.2e6)
    rng = np.random.default_rng(1)
    x, y = rng.uniform(-20, 20, 60), rng.uniform(-20, 20, 60)
    got = NearestPart(ext, x, y).distance_m(z)
    p = np.stack([x, y, np.full_like(x, z)], -1)
    sample, spacing = _surface_sample(ext)
    brute = np.full(x.shape, np.inf)
    if len(sample):
        brute = np.linalg.norm(p[:, None, :] - sample[None], axis=-1).min(1)
    for c, r in ext.spheres:
        brute = np.minimum(brute, np.maximum(np.linalg.norm(p - c, axis=1) - r, 0.0))
    assert np.all(got <= brute + 1e-9)
    assert np.all(got >= brute - spacing)
    got32 = NearestPart(ext, x, y, dtype=np.float32).distance_m(np.float32(z))
    assert np.allclose(got32, got, rtol=1e-5, atol=1e-4)


def _surface_sample(ext: Extent):
    """Points on every part of the structure, and the largest distance from any point of it to the nearest
    sample (spheres: their nearest point lies on the line to the centre, so the sample is exact there)."""
    pts, spacing = [], 0.0
    for a, b in ext.segments_m:
        n = int(np.linalg.norm(b - a) / 0.02) + 2
        pts.append(a + np.linspace(0, 1, n)[:, None] * (b - a))
        spacing = max(spacing, 0.5 * np.linalg.norm(b - a) / (n - 1))
    for c, u, v, hu, hv in ext.rectangles:
        nu, nv = int(2 * hu / 0.1) + 2, int(2 * hv / 0.1) + 2
        su, sv = np.meshgrid(np.linspace(-hu, hu, nu), np.linspace(-hv, hv, nv))
        pts.append(c + su.ravel()[:, None] * u + sv.ravel()[:, None] * v)
        spacing = max(spacing, 0.5 * math.hypot(2 * hu / (nu - 1), 2 * hv / (nv - 1)))
    for c, r in ext.discs:
        rr, th = np.meshgrid(np.linspace(0, r, 60), np.linspace(0, 2 * np.pi, 1200))
        pts.append(c + np.stack([rr.ravel() * np.cos(th.ravel()), rr.ravel() * np.sin(th.ravel()),
                                 0 * rr.ravel()], -1))
        spacing = max(spacing, 0.5 * r / 59 + r * np.pi / 1199)
    return (np.concatenate(pts) if pts else np.zeros((0, 3))), spacing
