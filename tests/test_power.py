"""Power chain: duty factors, averaging-window fill, average power, EIRP/ERP."""

import math

import pytest
from hypothesis import given, strategies as st

from rfsafe import power
from rfsafe.errors import InputError
from rfsafe.verification import state_of


def test_window_fill_oet65b_averaging_example():
    # OET Bulletin 65 Supplement B, time-averaging discussion (from memory): a 10 min on /
    # 10 min off schedule fills a 6 min (controlled) window completely and 20 of the 30 min of a
    # 30 min (uncontrolled) window.
    assert power.window_fill(10, 10, 6) == 1.0
    assert power.window_fill(10, 10, 30) == pytest.approx(20 / 30, rel=1e-15)


def test_window_fill_continuous_is_one():
    # common practice: a continuous schedule uses the full averaging period
    assert power.window_fill(None, None, 30) == 1.0


def test_window_fill_several_periods():
    # 2 on / 3 off in a 30 min window: six whole periods, 12 min on (closed form n*on + min(r, on))
    assert power.window_fill(2, 3, 30) == pytest.approx(12 / 30)
    # 2 on / 3 off in a 6 min window: one period plus 1 min of the next on-time = 3 min
    assert power.window_fill(2, 3, 6) == pytest.approx(3 / 6)


@given(on=st.floats(0.01, 120), off=st.floats(0, 120), window=st.floats(0.1, 60))
def test_window_fill_in_unit_interval(on, off, window):
    f = power.window_fill(on, off, window)
    assert 0 < f <= 1


@given(on=st.floats(0.01, 60), extra=st.floats(0.0, 60), off=st.floats(0, 60), window=st.floats(0.1, 60))
def test_window_fill_monotone_in_on_time(on, extra, off, window):
    # more on-time with the same off-time never lowers the fill
    assert power.window_fill(on + extra, off, window) >= power.window_fill(on, off, window) - 1e-12


@pytest.mark.parametrize("mode,published", [
    ("cw", 0.40),             # OET 65 Supplement B, Table 2, p. 14: conversational CW 40 % (READ-2)
    ("ssb", 0.20),            # Table 2: conversational SSB, no speech processing 20 % (READ-2)
    ("ssb-processed", 0.50),  # Table 2: conversational SSB, heavy speech processing 50 % (READ-2)
    ("fm", 1.00),             # Table 2: voice FM 100 % (READ-2)
    ("rtty", 1.00),           # Table 2: FSK or RTTY 100 % (READ-2)
    ("afsk", 1.00),           # Table 2: AFSK SSB 100 % (READ-2)
    ("carrier", 1.00),        # Table 2: carrier 100 % (READ-2)
])
def test_oet65_supplement_b_table2_duty_factor(mode, published):
    # READ-2: two reproductions of FCC OET Bulletin 65 Supplement B (1997), Table 2, p. 14
    row = power.duty_factor_table()[mode]
    assert row.duty_factor == published
    assert "Table 2, p. 14" in row.source
    assert state_of(row.verification) == "reproduction"


def test_rows_not_in_the_reproductions_stay_not_confirmed():
    # The AM rows were in neither reproduction of Table 2; "digital" is common practice.
    table = power.duty_factor_table()
    for mode in ("am", "am-full", "digital"):
        assert table[mode].verification == "not confirmed"
    for row in table.values():
        assert 0 < row.duty_factor <= 1
        assert row.source  # every row says where it came from


def test_oet65_supplement_b_time_averaging_example():
    # OET 65 Supplement B (READ-2): 500 W x 0.4 x (45 s of 360 s) = 25 W; 45 s on in a 6-min window
    fill = power.window_fill(45 / 60, (360 - 45) / 60, 6)
    assert fill == pytest.approx(45 / 360, rel=1e-12)
    assert power.average_power_w(500, 0.4, fill) == pytest.approx(25.0, rel=1e-12)


def test_unknown_mode_is_input_error():
    with pytest.raises(InputError) as err:
        power.mode_duty_factor("psk-9000", field="configurations[0].mode")
    assert str(err.value).startswith('configurations[0].mode: "psk-9000" is not a known mode (accepted: "cw"')


def test_average_power_chain():
    # 100 W PEP SSB (0.2), 10/10 schedule in a 30 min window: 100 * 0.2 * 2/3 W
    assert power.average_power_w(100, 0.2, power.window_fill(10, 10, 30)) == pytest.approx(100 * 0.2 * 2 / 3)


def test_eirp_erp_dipole():
    # common practice: half-wave dipole gain 1.64 (2.15 dBi); ERP = EIRP / 1.64
    assert power.eirp_w(100.0, 2.15) == pytest.approx(100 * 10 ** 0.215)
    assert power.eirp_w(100.0, 10 * math.log10(1.64)) == pytest.approx(164.0)
    assert power.erp_w(100.0, 2.15) == pytest.approx(100.0)
