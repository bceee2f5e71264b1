"""rfsafe/bounds.py: the stated input bounds, the README's table of them, and their checks."""

from pathlib import Path

import pytest

from rfsafe import bounds
from rfsafe.errors import InputError

README = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")


def test_readme_states_every_bound():
    """The README's "Limits of the input" table is the one in the code (common practice: one source)."""
    for what, bound in bounds.bounds_table():
        assert f"| {what} | {bound} |" in README, (what, bound)


@pytest.mark.parametrize("name, value, problem", [
    ("pep_w", 1e300, "is out of range (accepted: magnitude at most 1e+08 W)"),
    ("x_m", -2e5, "is out of range (accepted: magnitude at most 100000 m)"),
    ("points_m", [[0.0, 0.0, 1e9]], "has 1e+09 at [0][2], out of range (accepted: magnitude at most 100000 m)"),
    ("polygon", [[0.0, 0.0], [2e10, 0.0]], "has 2e+10 at [1][0], out of range (accepted: magnitude at most 100000 m)"),
    ("places", [{}] * (bounds.MAX_PLACES + 1), f"has {bounds.MAX_PLACES + 1} items (accepted: at most 10000)"),
    ("segments", 10**6, "is out of range (accepted: at most 2000 segments per wire antenna)"),
    ("gain_dbi", 61.0, "is out of range (accepted: magnitude at most 60 dBi)"),
    # soil conductivity in S/m, not metres: sea water is about 5 S/m (ITU-R P.527, from memory)
    ("soil_conductivity_s_m", 5e3, "is out of range (accepted: magnitude at most 1000 S/m)"),
    ("soil_conductivity_s_m", 5.0, None),
    ("freq_mhz", 14.2, None),
    # narrowest beam: below it the beam model's exponents divided by zero (found by the long fuzz)
    ("beamwidth_h_deg", 6.4e-8, 'is out of range (accepted: at least 0.1 deg; a narrower beam is described by '
                                'a pattern table, kind = "table")'),
    ("beamwidth_v_deg", 0.099, 'is out of range (accepted: at least 0.1 deg; a narrower beam is described by '
                                'a pattern table, kind = "table")'),
    ("beamwidth_h_deg", 0.1, None),
    # largest front-to-back: past it the site grid's tilted beam fell below the float64 pattern (measured)
    ("front_to_back_db", 63.4, "is out of range (accepted: at most 60 dB; for a larger ratio give 60: a higher "
                               "back lobe is the conservative side)"),
    ("front_to_back_db", 60.0, None),
    ("id", "x", None),
])
def test_field_bounds_by_unit_suffix(name, value, problem):
    assert bounds.field_bound_problem(name, value) == problem


def test_nesting_depth_without_recursion():
    deep = 1
    for _ in range(100_000):
        deep = [deep]
    assert bounds.nesting_depth(deep) == 100_000
    with pytest.raises(InputError, match=r'^FILE: "f.toml" nests tables and arrays more than 16 levels deep'):
        bounds.check_nesting(deep, field="FILE", path="f.toml")
    bounds.check_nesting({"a": [[1]]}, field="FILE", path="f.toml")


def test_place_configuration_pairs_bounded():
    """places x configurations is bounded on its own: 10,000 places with 50 configurations pass, one more does not."""
    bounds.check_place_configurations(bounds.MAX_PLACES, bounds.MAX_PLACE_CONFIGURATIONS // bounds.MAX_PLACES)
    with pytest.raises(InputError, match=r"^places: 10000 places with 51 configurations make 510,000 "
                                         r"place-configuration pairs \(accepted: at most 500,000\)$"):
        bounds.check_place_configurations(10_000, 51)


def test_station_loader_applies_the_pair_bound(monkeypatch):
    """The loader refuses a station beyond the pair bound (lowered here to below the demo's 5 x 4) as bad input."""
    from rfsafe.station import load_station

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
    load_station(demo)
    monkeypatch.setattr(bounds, "MAX_PLACE_CONFIGURATIONS", 19)
    with pytest.raises(InputError, match=r"^places: 5 places with 4 configurations make 20 place-configuration pairs"):
        load_station(demo)
