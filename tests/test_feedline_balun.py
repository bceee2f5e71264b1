"""Baluns: ideal-transformer relations, the equivalent-power rule, and the balun inside evaluate_line
(checked with scikit-rf's line transformation and a brute-force sweep of the load phase)."""

import math

import numpy as np
import pytest

from rfsafe.errors import InputError
from rfsafe.feedline import cable_class, custom_cable, evaluate_line
from rfsafe.feedline.balun import (
    BALUN_DESIGN_OHM, BalunSpec, balun_equivalent_power_w, balun_stress, parse_balun_ratio,
)
from rfsafe.feedline.matching import TunerSpec

LOSSLESS_200 = custom_cable(z0_ohm=200.0, loss_db_per_100m=0.0, freq_hz=7e6, velocity_factor=0.9)
LOSSLESS_50 = custom_cable(z0_ohm=50.0, loss_db_per_100m=0.0, freq_hz=7e6, velocity_factor=0.66)


def test_ratio_parsing():
    assert [parse_balun_ratio(t) for t in ("1:1", "4:1", " 9 : 1 ", "1.5:1")] == [1.0, 4.0, 9.0, 1.5]
    for bad in ("1:4", "4", "4:2", "0:1", "100:1", "four:1"):
        with pytest.raises(InputError, match=r'^balun.ratio: ".*" is not a balun ratio \(accepted: "n:1" with the '
                                             r'balanced side first'):
            parse_balun_ratio(bad)


def test_ideal_transformer_relations():
    """Ideal n:1 transformer: V_bal = sqrt(n) V_unbal, I_bal = I_unbal / sqrt(n) (circuit theory)."""
    spec = BalunSpec(4.0, "antenna", power_rating_w=1000.0)
    b = balun_stress(spec, voltage_v_peak=100.0, current_a_peak=2.0, pep_w=100.0, avg_power_w=50.0)
    assert b.voltage_balanced_v_peak == pytest.approx(200.0, rel=1e-15)
    assert b.current_balanced_a_peak == pytest.approx(1.0, rel=1e-15)
    assert b.design_balanced_ohm == 4 * BALUN_DESIGN_OHM
    tx = balun_stress(BalunSpec(4.0, "transmitter"), voltage_v_peak=200.0, current_a_peak=1.0, pep_w=100.0,
                      avg_power_w=50.0)
    assert (tx.voltage_unbalanced_v_peak, tx.current_unbalanced_a_peak) == pytest.approx((100.0, 2.0), rel=1e-15)


def test_equivalent_power_rule():
    """At its design impedance the equivalent power is the power itself: V = sqrt(2 P 50) and I = V / 50
    give P for both the voltage and the current form (closed form); a mismatch raises the larger one."""
    p = 400.0
    v = math.sqrt(2 * p * 50)
    assert balun_equivalent_power_w(v, v / 50) == pytest.approx(p, rel=1e-14)
    assert balun_equivalent_power_w(2 * v, v / 50 / 2) == pytest.approx(4 * p, rel=1e-14)   # 200 ohm seen
    assert balun_equivalent_power_w(v / 2, 2 * v / 50) == pytest.approx(4 * p, rel=1e-14)   # 12.5 ohm seen


def test_matched_balun_at_antenna_sees_its_rated_condition():
    """A 200 ohm antenna through a 4:1 balun on lossless 50 ohm coax: the line is matched (SWR 1) and the
    balun sees exactly the PEP at its design impedance (closed form)."""
    r = evaluate_line(pep_w=500.0, avg_power_w=250.0, freq_hz=7e6, cable=LOSSLESS_50, length_m=20.0,
                      load_ohm=200.0, balun=BalunSpec(4.0, "antenna", power_rating_w=1000.0, loss_db=0.1, label="4:1"))
    assert r.swr_at_antenna == pytest.approx(1.0, abs=1e-12)
    assert r.balun.equivalent_power_w == pytest.approx(500.0, rel=1e-12)
    assert r.balun.voltage_balanced_v_peak == pytest.approx(math.sqrt(2 * 500 * 200), rel=1e-12)
    # heat: the matched-loss fraction of the average power (0.1 dB)
    assert r.balun.dissipation_avg_w == pytest.approx(250.0 * (1 - 10 ** -0.01), rel=1e-12)
    part = next(p for p in r.part_stresses if p.part == "balun")
    assert (part.headroom, part.status) == (pytest.approx(2.0, rel=1e-12), "ok")
    assert "antenna impedance as given, divided by the balun ratio 4" in r.load_assumption


def test_balun_at_transmitter_feeds_the_tuner_through_its_ratio():
    """Balun at the transmitter on a balanced line: the tuner is designed for Z_in / n (Z_in from scikit-rf's
    lossy-line transformation), and the balun sees the line's input voltage and current."""
    tf = pytest.importorskip("skrf.tlineFunctions")
    c = cable_class("window-450")
    zl, f, length = 600 - 900j, 3.6e6, 15.0
    r = evaluate_line(pep_w=400.0, avg_power_w=400.0, freq_hz=f, cable=c, length_m=length, load_ohm=zl,
                      tuner=TunerSpec("t", inductor_q=math.inf), balun=BalunSpec(4.0, "transmitter"))
    g = complex(np.log(10) / 20 * r.matched_loss_db / length + 2j * np.pi * f / (c.velocity_factor * 299792458.0))
    zin = complex(np.squeeze(tf.zl_2_zin(c.z0_ohm, zl, g * length)))
    assert r.tuner.network.load_ohm == pytest.approx(zin / 4, rel=1e-10)
    assert r.tuner.network.input_impedance_ohm == pytest.approx(50.0, rel=1e-9)
    assert r.balun.voltage_balanced_v_peak == pytest.approx(r.voltage_at_transmitter_v_peak, rel=1e-12)
    assert r.balun.current_balanced_a_peak == pytest.approx(r.current_at_transmitter_a_peak, rel=1e-12)
    # power through a lossless path: the line input voltage satisfies P = |V|^2 Re(1/Z_in) / 2
    assert 0.5 * r.voltage_at_transmitter_v_peak ** 2 * (1 / zin).real == pytest.approx(400.0, rel=1e-6)
    # without a tuner the transmitter sees Z_in / 4 against 50 ohm
    bare = evaluate_line(pep_w=400.0, avg_power_w=400.0, freq_hz=f, cable=c, length_m=length, load_ohm=zl,
                         balun=BalunSpec(4.0, "transmitter"))
    gam = abs((zin / 4 - 50) / (zin / 4 + 50))
    assert bare.swr_seen_by_transmitter == pytest.approx((1 + gam) / (1 - gam), rel=1e-9)


def test_balun_tolerable_swr_is_the_worst_phase():
    """At the balun's largest tolerable SWR the worst load phase brings it exactly to its rating, and no
    phase exceeds it (brute force over 720 load phases on a lossless 200 ohm line)."""
    kw = dict(pep_w=1000.0, avg_power_w=1000.0, freq_hz=7e6, cable=LOSSLESS_200, length_m=11.0)
    spec = BalunSpec(4.0, "transmitter", power_rating_w=2500.0)
    r = evaluate_line(swr=2.0, balun=spec, **kw)
    part = next(p for p in r.part_stresses if p.part == "balun")
    s_max = part.largest_tolerable_swr
    assert 1 < s_max < 10
    g = (s_max - 1) / (s_max + 1)
    worst = 0.0
    for ph in np.linspace(0, 2 * np.pi, 720, endpoint=False):
        zl = 200 * (1 + g * np.exp(1j * ph)) / (1 - g * np.exp(1j * ph))
        worst = max(worst, evaluate_line(load_ohm=complex(zl), balun=spec, **kw).balun.equivalent_power_w)
    assert worst <= 2500.0 * (1 + 1e-9)
    assert worst == pytest.approx(2500.0, rel=1e-4)   # 720 phases come within 1e-4 of the peak


def test_balun_errors():
    base = dict(pep_w=100.0, avg_power_w=100.0, freq_hz=7e6, cable=LOSSLESS_50, length_m=5.0, load_ohm=50.0)
    with pytest.raises(InputError, match=r'^line.balun.location: "roof" is not a known location'):
        evaluate_line(balun=BalunSpec(4.0, "roof"), **base)
    with pytest.raises(InputError, match=r"^line.balun.power_rating_w: -5.0 must be a number > 0 W$"):
        evaluate_line(balun=BalunSpec(4.0, "antenna", power_rating_w=-5.0), **base)
    with pytest.raises(InputError, match=r'^line.balun.location: "antenna" with a tuner also at the antenna is not '
                                         r'modelled'):
        evaluate_line(balun=BalunSpec(4.0, "antenna"), tuner=TunerSpec("l", position="antenna"), **base)


def test_missing_balun_on_ladder_line_is_noted():
    kw = dict(pep_w=100.0, avg_power_w=100.0, freq_hz=3.6e6, cable=cable_class("window-450"), length_m=15.0,
              load_ohm=600 - 900j, tuner=TunerSpec("t"))
    assert any(n.startswith("no balun declared between the tuner and the balanced line") for n in evaluate_line(**kw).notes)
    with_balun = evaluate_line(balun=BalunSpec(4.0, "transmitter"), **kw)
    assert not any(n.startswith("no balun declared") for n in with_balun.notes)
