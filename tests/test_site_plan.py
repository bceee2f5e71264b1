"""The station plan: antenna extents (textbook lengths, declared sizes, wire geometry) and the keep-out grid."""

from pathlib import Path

import numpy as np
import pytest

from rfsafe.assess import assess
from rfsafe.site.plan import PLAN_LEVELS, antenna_outline
from rfsafe.station import load_station
from rfsafe.station.schema import Antenna
from rfsafe.units import wavelength_m

DEMOS = Path(__file__).resolve().parent.parent / "reports_demo"


def test_half_wave_dipole_is_half_a_wavelength_broadside_to_its_azimuth():
    # textbook half-wave dipole length lambda/2 (common practice); azimuth 90 deg: the wire runs north-south
    ant = Antenna(id="d", kind="half-wave-dipole", x_m=1.0, y_m=2.0, height_m=10.0, azimuth_deg=90.0)
    segs, size, basis = antenna_outline(ant, [7.1e6, 14.2e6])
    lam = wavelength_m(7.1e6)                        # the lowest frequency gives the longest antenna
    assert size == pytest.approx(lam / 2)
    (x1, y1, z1), (x2, y2, z2) = segs[0]
    assert x1 == pytest.approx(1.0) and x2 == pytest.approx(1.0) and z1 == z2 == 10.0
    assert abs(y2 - y1) == pytest.approx(lam / 2)
    assert "λ/2" in basis


def test_quarter_wave_vertical_stands_on_the_ground_never_below_it():
    ant = Antenna(id="v", kind="quarter-wave-vertical", height_m=0.5, polarisation="vertical")
    (a, b), = antenna_outline(ant, [14.1e6])[0]
    assert min(a[2], b[2]) == pytest.approx(0.0)
    assert abs(b[2] - a[2]) == pytest.approx(wavelength_m(14.1e6) / 4)    # lambda/4 monopole (common practice)


def test_declared_aperture_and_unknown_size():
    beam = Antenna(id="b", kind="beam", gain_dbi=8.0, height_m=15.0, azimuth_deg=0.0, aperture_m=10.0)
    (a, b), = antenna_outline(beam, [14.2e6])[0]
    assert abs(b[0] - a[0]) == pytest.approx(10.0) and a[1] == pytest.approx(b[1])   # broadside to north
    other = Antenna(id="o", kind="other", gain_dbi=3.0, height_m=5.0)
    segs, size, basis = antenna_outline(other, [145e6])
    assert segs == () and size is None and "no dimension" in basis


def test_plan_grid_agrees_with_the_places_far_field():
    # the plan's ratio at a grid point is the same far-field sum as a place's (peak gain everywhere for
    # antennas without use_pattern): at the grid point nearest a place, the head-height total is within the
    # ratio change over half a grid cell of the place's own total (1/R^2 law)
    res = assess(load_station(DEMOS / "demo_station.toml"))
    plan = res.plan
    assert set(plan.heights_m) == set(PLAN_LEVELS)
    x, y = np.asarray(plan.x_m), np.asarray(plan.y_m)
    head = plan.ratio[("head", "uncontrolled")]
    for pl in res.places:
        if pl.environment != "uncontrolled" or pl.height_m > 2.0:
            continue
        i, j = int(np.argmin(abs(y - pl.y_m))), int(np.argmin(abs(x - pl.x_m)))
        assert head[i, j] == pytest.approx(pl.total_ratio, rel=0.5)
    assert all(v >= 0 for v in plan.max_ratio.values())


def test_plan_measures_from_the_nearest_part_of_the_antenna(tmp_path):
    # A place under the east end of the demo's 40 m half-wave dipole (lambda/2 = 21.1 m at 7.15 MHz,
    # centre (0, 12) m, wire east-west): 8.3 m below the wire, 13 m from its centre. The plan's keep-out
    # grid must judge the ground there as the place is judged (nearest part, never the centre): at the
    # grid points around the place, the head-height ratio is at least the place's own over the half-cell
    # change of the 1/R^2 law (measured from the centre instead it would be (8.3/13)^2 = 0.41 of it).
    import tomllib

    from fuzz_support import to_toml

    data = tomllib.loads((DEMOS / "demo_station.toml").read_text())
    data["places"] = [{"label": "Under the dipole's end", "x_m": 10.0, "y_m": 12.0, "height_m": 1.7,
                       "environment": "uncontrolled", "why": "garden path"}]
    path = tmp_path / "end.toml"
    path.write_text(to_toml(data))
    res = assess(load_station(path))
    (pl,) = res.places
    x, y = np.asarray(res.plan.x_m), np.asarray(res.plan.y_m)
    head = res.plan.ratio[("head", "uncontrolled")]
    i = int(np.searchsorted(y, pl.y_m)) - 1
    j = int(np.searchsorted(x, pl.x_m)) - 1
    around = head[i:i + 2, j:j + 2]
    cell = max(x[1] - x[0], y[1] - y[0])
    half_cell_law = ((8.3 - cell) / 8.3) ** 2
    assert around.max() >= pl.total_ratio * half_cell_law
