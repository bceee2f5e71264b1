"""Cable and connector catalogue: every row sourced, lookups, custom cable."""

import math

import pytest

from rfsafe.errors import InputError
from rfsafe.feedline import (
    cable_class, cable_ids, connector_ids, connector_series, custom_cable, matched_loss_db,
    matched_loss_db_per_100m, power_rating_w,
)


def test_ids_and_sources():
    assert set(cable_ids()) == {"rg-58", "rg-8x", "rg-213", "rg-174", "twinlead-300", "window-450",
                                "open-wire-600"}
    for cid in cable_ids():
        c = cable_class(cid)
        assert "from memory" in c.source or "common practice" in c.source
        assert 0 < c.velocity_factor <= 1
    for kid in connector_ids():
        assert "common practice" in connector_series(kid).source


def test_nominal_impedances_by_designation():
    """Common practice: RG-58/8X/213/174 are 50 ohm classes; twin-lead 300, window line 450, open wire 600."""
    assert [cable_class(i).z0_ohm for i in ("rg-58", "rg-8x", "rg-213", "rg-174")] == [50.0] * 4
    assert cable_class("twinlead-300").z0_ohm == 300.0
    assert cable_class("window-450").z0_ohm == 450.0
    assert cable_class("open-wire-600").z0_ohm == 600.0


def test_loss_model_and_ranking():
    """Two-term model k1 sqrt(f) + k2 f (Pozar sec. 2.7); common practice: RG-174 > RG-58 > RG-8X > RG-213 >
    ladder line in loss at HF."""
    c = cable_class("rg-213")
    assert matched_loss_db_per_100m(c, 100e6) == pytest.approx(c.loss_sqrt_db_per_100m * 10 + c.loss_lin_db_per_100m * 100)
    assert matched_loss_db(c, 100e6, 50.0) == pytest.approx(matched_loss_db_per_100m(c, 100e6) / 2)
    losses = [matched_loss_db_per_100m(cable_class(i), 14e6) for i in ("rg-174", "rg-58", "rg-8x", "rg-213", "window-450")]
    assert losses == sorted(losses, reverse=True)


def test_voltage_rating_is_peak_of_rms_column():
    c = cable_class("rg-213")
    assert c.max_voltage_v_peak == pytest.approx(c.max_voltage_v_rms * math.sqrt(2))


def test_power_rating_scales_inverse_with_attenuation():
    c = cable_class("rg-58")
    p30 = power_rating_w(c, 30e6)
    assert p30 == pytest.approx(c.max_power_w)
    assert power_rating_w(c, 3e6) == pytest.approx(
        p30 * matched_loss_db_per_100m(c, 30e6) / matched_loss_db_per_100m(c, 3e6))
    assert power_rating_w(cable_class("window-450"), 14e6) is None


def test_unknown_ids():
    with pytest.raises(InputError, match=r'^cable: "rg-9" is not a known cable class \(known: "rg-58", "rg-8x"'):
        cable_class("rg-9")
    with pytest.raises(InputError, match=r'^configurations\[1\].cable: "custom" needs its own figures'):
        cable_class("custom", field="configurations[1].cable")
    with pytest.raises(InputError, match=r'^connector: "sma" is not a known connector series \(known: "uhf", "n", "bnc"\)$'):
        connector_series("sma")


def test_custom_cable():
    c = custom_cable(z0_ohm=75.0, loss_db_per_100m=3.0, freq_hz=10e6, velocity_factor=0.8)
    assert matched_loss_db_per_100m(c, 10e6) == pytest.approx(3.0, rel=1e-14)
    assert matched_loss_db_per_100m(c, 40e6) == pytest.approx(6.0, rel=1e-14)  # sqrt(f) scaling
    with pytest.raises(InputError, match=r"^cable.velocity_factor: 1.2 must be > 0 and <= 1$"):
        custom_cable(z0_ohm=75.0, loss_db_per_100m=3.0, freq_hz=10e6, velocity_factor=1.2)
    with pytest.raises(InputError, match=r"^cable.z0_ohm: -50 must be a number > 0 ohm$"):
        custom_cable(z0_ohm=-50, loss_db_per_100m=3.0, freq_hz=10e6, velocity_factor=0.8)
