"""evaluate_line: loss, stress, headroom and tolerable SWR, checked against closed forms (Pozar,
Microwave Engineering, 4th ed.) and scikit-rf."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

skrf = pytest.importorskip("skrf")
from skrf import tlineFunctions as tf  # noqa: E402

from rfsafe.errors import InputError  # noqa: E402
from rfsafe.feedline import cable_class, custom_cable, evaluate_line, mismatch_total_loss_db  # noqa: E402
from rfsafe.feedline.line import low_loss_complex_z0, reflection_coefficient  # noqa: E402
from rfsafe.feedline.matching import TunerSpec  # noqa: E402

LOSSLESS = custom_cable(z0_ohm=50.0, loss_db_per_100m=0.0, freq_hz=14e6, velocity_factor=0.66,
                        max_voltage_v_peak=2000.0, max_power_w=1000.0)


def test_lossless_line_peak_voltage_closed_form():
    """Pozar eq. 2.40: V_max = |V+|(1+|G|), |V+| = sqrt(2 P_f Z0), P_f = P/(1 - |G|^2)."""
    r = evaluate_line(pep_w=1000.0, avg_power_w=1000.0, freq_hz=14e6, cable=LOSSLESS, length_m=10.0, swr=3.0)
    g = 0.5
    vmax = math.sqrt(2 * 1000.0 / (1 - g * g) * 50.0) * (1 + g)
    assert r.line_voltage_v_peak == pytest.approx(vmax, rel=1e-12)
    assert r.line_voltage_v_rms == pytest.approx(vmax / math.sqrt(2), rel=1e-12)
    assert r.line_current_a_peak == pytest.approx(vmax / 50.0, rel=1e-12)
    assert r.total_loss_db == pytest.approx(0.0, abs=1e-12)
    assert r.swr_at_transmitter == pytest.approx(3.0, rel=1e-12)
    # 1/SWR rule (common practice): on a lossless line the equivalent matched power is avg * SWR
    heat = next(p for p in r.part_stresses if p.part == "line.heating")
    assert heat.stress == pytest.approx(1000.0 * 3.0, rel=1e-12)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", [
    ("rg-213", 14.2e6, 30.0, 12 - 35j), ("rg-58", 28.4e6, 21.7, 150 + 80j), ("rg-8x", 50.2e6, 9.0, 20 - 10j),
    ("window-450", 3.7e6, 33.0, 60 + 5j),
])
def test_given_load_against_skrf(cable_id, freq_hz, length_m, zl):
    c = cable_class(cable_id)
    r = evaluate_line(pep_w=500.0, avg_power_w=200.0, freq_hz=freq_hz, cable=c, length_m=length_m, load_ohm=zl)
    g = complex(np.log(10) / 20 * r.matched_loss_db / length_m + 2j * np.pi * freq_hz / (c.velocity_factor * 299792458.0))
    zin_ref = complex(np.squeeze(tf.zl_2_zin(c.z0_ohm, zl, g * length_m)))
    assert r.input_impedance_ohm == pytest.approx(zin_ref, rel=1e-10)
    tl_ref = 10 * math.log10(float(np.squeeze(tf.zl_2_total_loss(c.z0_ohm, zl, g * length_m))))
    assert r.total_loss_db == pytest.approx(tl_ref, rel=1e-9)
    assert r.power_at_antenna_w == pytest.approx(500.0 * 10 ** (-tl_ref / 10), rel=1e-9)
    assert r.line_dissipation_avg_w == pytest.approx(200.0 * (1 - 10 ** (-tl_ref / 10)), rel=1e-9)
    assert r.swr_at_transmitter == pytest.approx(float(np.squeeze(tf.zl_2_swr(c.z0_ohm, zin_ref))), rel=1e-9)
    # brute-force maximum of |V| on a 200 001-point grid propagated by skrf from the line input
    x = np.linspace(0, length_m, 200_001)
    v_in = math.sqrt(2 * 500.0 * zin_ref.real) * abs(zin_ref) / zin_ref.real  # |V| for P = |V|^2 Re(1/Z*)/2
    i_in = v_in / zin_ref
    v2, i2 = tf.voltage_current_propagation(np.array([v_in]), np.array([i_in]), np.array([complex(c.z0_ohm)]),
                                            np.array([g * x]))
    vmax_ref, imax_ref = np.abs(v2).max(), np.abs(i2).max()
    # our refined maximum is at least the dense-grid maximum and exceeds it by less than the grid's
    # quadratic sampling error (about 1e-8 relative at this spacing)
    assert vmax_ref * (1 - 1e-9) <= r.line_voltage_v_peak <= vmax_ref * (1 + 1e-6)
    assert imax_ref * (1 - 1e-9) <= r.line_current_a_peak <= imax_ref * (1 + 1e-6)
    k = int(np.argmax(np.abs(v2)))
    assert abs(r.line_voltage_max_position_m - x[k]) < 0.01 * length_m or \
        abs(np.abs(v2).ravel()[k] - r.line_voltage_v_peak) < 1e-6 * r.line_voltage_v_peak


def test_swr_only_is_worst_case_over_phase():
    c = cable_class("rg-213")
    kw = dict(pep_w=1000.0, avg_power_w=1000.0, freq_hz=21.2e6, cable=c, length_m=27.0)
    env = evaluate_line(swr=4.0, **kw)
    g = 0.6
    vmax = 0.0
    for ph in np.linspace(0, 2 * np.pi, 48, endpoint=False):
        zl = 50 * (1 + g * np.exp(1j * ph)) / (1 - g * np.exp(1j * ph))
        r = evaluate_line(load_ohm=complex(zl), **kw)
        assert r.total_loss_db == pytest.approx(env.total_loss_db, rel=1e-9)  # real Z0: loss depends on |G| only
        assert r.line_voltage_v_peak <= env.line_voltage_v_peak * (1 + 1e-9)
        assert r.voltage_at_antenna_v_peak <= env.voltage_at_antenna_v_peak * (1 + 1e-9)
        assert r.voltage_at_transmitter_v_peak <= env.voltage_at_transmitter_v_peak * (1 + 1e-9)
        vmax = max(vmax, r.line_voltage_v_peak)
    assert vmax >= env.line_voltage_v_peak * (1 - 1e-3)  # 48 phases come within 0.1 % of the envelope
    assert env.total_loss_db == pytest.approx(mismatch_total_loss_db(env.matched_loss_db, g), rel=1e-12)


def test_exact_complex_z0_option():
    c = cable_class("rg-58")
    r = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=3.6e6, cable=c, length_m=40.0, load_ohm=12 - 35j,
                      exact_complex_z0=True)
    assert r.loss_model.startswith("exact, complex Z0")
    g = complex(np.log(10) / 20 * r.matched_loss_db / 40.0 + 2j * np.pi * 3.6e6 / (0.66 * 299792458.0))
    z0c = low_loss_complex_z0(50.0, g)
    assert r.z0_ohm == pytest.approx(z0c)
    ref = 10 * math.log10(float(np.squeeze(tf.zl_2_total_loss(z0c, 12 - 35j, g * 40.0))))
    assert r.total_loss_db == pytest.approx(ref, rel=1e-9)
    closed = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=3.6e6, cable=c, length_m=40.0, load_ohm=12 - 35j)
    assert closed.loss_model.startswith("closed form")
    # alpha/beta ~ 0.03 on RG-58 at 3.6 MHz: with a strongly reactive load the complex Z0 changes the loss
    # noticeably (here about 0.38 dB), which is why the exact option exists ...
    assert r.total_loss_db - closed.total_loss_db > 0.1
    # ... while on a matched (50 ohm) load both models give nearly the matched loss (|G| ~ alpha/(2 beta))
    m_exact = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=3.6e6, cable=c, length_m=40.0, load_ohm=50,
                            exact_complex_z0=True)
    assert m_exact.total_loss_db == pytest.approx(closed.matched_loss_db, abs=0.01)


def test_tolerable_swr_reaches_rating():
    c = cable_class("rg-213")
    kw = dict(pep_w=1500.0, avg_power_w=1500.0, freq_hz=14.2e6, cable=c, length_m=30.0, connector="uhf")
    r = evaluate_line(swr=2.0, **kw)
    for part in ("connector.transmitter", "connector.antenna", "line.heating"):
        s_max = r.largest_tolerable_swr[part]
        again = evaluate_line(swr=s_max, **kw)
        p = next(p for p in again.part_stresses if p.part == part)
        assert p.headroom == pytest.approx(1.0, rel=1e-9)
    assert math.isinf(r.largest_tolerable_swr["line"])  # 7 kV peak is never reached with the line loss


def test_exceeded_parts_and_connector_override():
    c = cable_class("rg-58")
    r = evaluate_line(pep_w=1500.0, avg_power_w=1500.0, freq_hz=7.1e6, cable=c, length_m=20.0, swr=1.0,
                      connector_v_peak_rating=300.0)
    # matched: sqrt(2 * 1500 * 50) = 387 V peak at the transmitter end > 300 V
    assert r.voltage_at_transmitter_v_peak == pytest.approx(math.sqrt(2 * 1500 * 50), rel=1e-12)
    assert "connector.transmitter" in r.exceeded_parts
    p = next(p for p in r.part_stresses if p.part == "connector.transmitter")
    assert p.largest_tolerable_swr is None and "even with a matched line" in p.tolerable_swr_note
    ok = evaluate_line(pep_w=10.0, avg_power_w=10.0, freq_hz=7.1e6, cable=c, length_m=20.0, swr=1.5, connector="n")
    assert ok.exceeded_parts == ()


def test_tuner_at_transmitter_and_antenna():
    c = cable_class("rg-213")
    kw = dict(pep_w=100.0, avg_power_w=100.0, freq_hz=7.1e6, cable=c, length_m=15.0, load_ohm=12 - 35j)
    tx = evaluate_line(tuner=TunerSpec("l", inductor_q=math.inf), **kw)
    assert tx.tuner.network.input_impedance_ohm == pytest.approx(50.0, rel=1e-9)
    assert tx.swr_seen_by_transmitter == pytest.approx(1.0, abs=1e-9)
    assert tx.tuner_parts == tx.tuner.network.parts
    ant = evaluate_line(tuner=TunerSpec("pi", position="antenna", loaded_q=5.0, inductor_q=math.inf), **kw)
    assert ant.swr_at_antenna == pytest.approx(1.0, abs=1e-9)  # the network matches the antenna to the line
    assert ant.tuner.network.input_power_w == pytest.approx(ant.power_at_antenna_w, rel=1e-12)


@pytest.mark.parametrize("kwargs,message", [
    (dict(swr=0.9), r"^line.swr: 0.9 must be a finite number >= 1 and <= 1e\+06$"),  # bound: rfsafe.bounds
    (dict(swr=2.0, load_ohm=50), r"^line.swr: 2.0 give exactly one of swr and load_ohm$"),
    (dict(load_ohm=-5 + 3j), r"^line.load_ohm: -5\+3j must have a resistance > 0 ohm \(a passive antenna\)$"),
    (dict(swr=2.0, length_m=-1.0), r"^line.length_m: -1.0 must be a number >= 0 m$"),
    (dict(swr=2.0, avg_power_w=200.0), r"^line.avg_power_w: 200.0 must not exceed pep_w \(100 W\)$"),
    (dict(swr=2.0, connector="sma"), r'^line.connector: "sma" is not a known connector series'),
    (dict(swr=2.0, tuner=TunerSpec("l")), r'^line.tuner: "l" needs load_ohm'),
])
def test_bad_inputs(kwargs, message):
    base = dict(pep_w=100.0, avg_power_w=100.0, freq_hz=7e6, cable=cable_class("rg-58"), length_m=10.0)
    base.update(kwargs)
    with pytest.raises(InputError, match=message):
        evaluate_line(**base)


@settings(max_examples=60, deadline=None)
@given(cable_id=st.sampled_from(["lossless", "rg-58", "rg-213", "window-450", "rg-174"]),
       r=st.floats(1.0, 3000.0), x=st.floats(-2000.0, 2000.0), half_waves=st.floats(1.0, 12.0),
       f_mhz=st.floats(1.8, 150.0))
def test_peak_voltage_never_below_matched_value(cable_id, r, x, half_waves, f_mhz):
    """For the same forward power at the input, the peak voltage on a line at least half a wavelength long
    is never below the matched value sqrt(2 P_f Z0) (Pozar eq. 2.40: somewhere in every half wave
    Gamma(d) is real and positive, so |V| = |V+(d)| (1 + |G(d)|) >= |V+(d)|). On a lossy line |V+| may
    shrink by e^(-alpha lambda/2) over that half wave, so the bound carries that factor (1 when lossless)."""
    c = LOSSLESS if cable_id == "lossless" else cable_class(cable_id)
    lam_line = c.velocity_factor * 299792458.0 / (f_mhz * 1e6)
    length = half_waves * lam_line / 2
    res = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=f_mhz * 1e6, cable=c, length_m=length,
                        load_ohm=complex(r, x))
    alpha = np.log(10) / 20 * res.matched_loss_db / length
    g_in = abs(reflection_coefficient(res.input_impedance_ohm, c.z0_ohm))
    p_fwd = 100.0 / (1 - g_in ** 2)
    bound = math.sqrt(2 * p_fwd * c.z0_ohm) * math.exp(-alpha * lam_line / 2)
    assert res.line_voltage_v_peak >= bound * (1 - 1e-9)
    if cable_id == "lossless":  # exact: V_max = sqrt(2 P_f Z0)(1 + |G|)
        assert res.line_voltage_v_peak == pytest.approx(math.sqrt(2 * p_fwd * 50.0) * (1 + g_in), rel=1e-9)
    assert res.total_loss_db >= res.matched_loss_db - 1e-12


# --------------------------------------------------------------------------- connector loss (issue: added, never
# multiplied by the mismatch). The rule: total loss = cable loss with mismatch + connector loss [dB].

def test_connector_loss_on_zero_length_line_is_exactly_the_connector_loss():
    """A zero-length line has no mismatch loss (Pozar eq. 2.93 with ML = 0 gives L = 0), so 0.25 dB of
    connectors at SWR 10 lose exactly 0.25 dB: closed form and exact model alike."""
    c = cable_class("rg-213")
    for exact in (False, True):
        r = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=14.2e6, cable=c, length_m=0.0, swr=10.0,
                          connector_loss_db=0.25, exact_complex_z0=exact)
        assert r.total_loss_db == pytest.approx(0.25, abs=1e-12)
        assert r.loss_fraction == pytest.approx(10 ** (-0.25 / 10), rel=1e-12)
        assert r.mismatch_extra_loss_db == pytest.approx(0.0, abs=1e-12)
        assert r.connector_loss_db == 0.25


def test_mismatched_line_loss_plus_connectors_textbook_form():
    """Total loss of a mismatched line, ARRL Antenna Book transmission-line chapter / Pozar, Microwave
    Engineering, 4th ed., eq. (2.93): L = 10 log10[(a^2 - |G|^2) / (a (1 - |G|^2))], a = 10^(ML/10),
    written out here; connectors add their loss in dB after it."""
    c = custom_cable(z0_ohm=50.0, loss_db_per_100m=10.0, freq_hz=14.2e6, velocity_factor=0.66)
    r = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=14.2e6, cable=c, length_m=30.0, swr=3.0,
                      connector_loss_db=0.2)
    ml = 3.0                 # 10 dB/100 m x 30 m
    g = (3.0 - 1) / (3.0 + 1)
    a = 10 ** (ml / 10)
    expected = 10 * math.log10((a * a - g * g) / (a * (1 - g * g))) + 0.2
    assert r.matched_loss_db == pytest.approx(ml, rel=1e-12)
    assert r.total_loss_db == pytest.approx(expected, rel=1e-12)
    # the worked figure: 3 dB matched at SWR 3 gives 3.97 dB (textbook curves read about 4 dB, from memory)
    assert r.total_loss_db - 0.2 == pytest.approx(3.968, abs=5e-4)
    assert r.mismatch_extra_loss_db == pytest.approx(expected - ml - 0.2, rel=1e-12)


def test_connector_loss_does_not_change_line_stress_and_skrf_loss():
    """Connector loss never lowers the voltages on the cable (conservative for stress); the exact model's
    loss equals scikit-rf's lossy-line power ratio plus the connector loss."""
    c = cable_class("rg-58")
    kw = dict(pep_w=400.0, avg_power_w=400.0, freq_hz=7.1e6, cable=c, length_m=25.0, load_ohm=20 - 30j,
              exact_complex_z0=True)
    without = evaluate_line(**kw)
    with_conn = evaluate_line(**kw, connector_loss_db=0.5)
    assert with_conn.line_voltage_v_peak == pytest.approx(without.line_voltage_v_peak, rel=1e-12)
    assert with_conn.total_loss_db == pytest.approx(without.total_loss_db + 0.5, rel=1e-12)


def test_readme_states_the_same_connector_rule():
    """The README's feedline-loss rule and the code's loss-model text say the same thing."""
    from pathlib import Path

    from rfsafe.feedline.stress import CONNECTOR_LOSS_RULE

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    assert CONNECTOR_LOSS_RULE in " ".join(readme.split())   # line breaks in the README are not significant


def test_connector_per_end_or_none():
    """Ladder line is usually connected without a connector (common practice): one end, both, or none."""
    c = cable_class("window-450")
    kw = dict(pep_w=400.0, avg_power_w=400.0, freq_hz=3.6e6, cable=c, length_m=15.0, load_ohm=600 - 900j)
    none = evaluate_line(**kw)
    assert not any(p.part.startswith("connector") for p in none.part_stresses)
    assert (none.connector_at_transmitter, none.connector_at_antenna) == (None, None)
    tx = evaluate_line(connector_at_transmitter="uhf", connector_at_antenna="none", **kw)
    assert [p.part for p in tx.part_stresses if p.part.startswith("connector")] == ["connector.transmitter"]
    assert (tx.connector_at_transmitter, tx.connector_at_antenna) == ("uhf", None)
    p = next(p for p in tx.part_stresses if p.part == "connector.transmitter")
    assert p.stress == pytest.approx(tx.voltage_at_transmitter_v_peak, rel=1e-15) and p.rating == 500.0
    with pytest.raises(InputError, match=r'^line.connector: "uhf" puts a coax connector at both ends of a balanced '
                                         r'line, which usually has none'):
        evaluate_line(connector="uhf", **kw)
    with pytest.raises(InputError, match=r'^line.connector: "n" cannot be combined with connector_at_transmitter'):
        evaluate_line(connector="n", connector_at_antenna="uhf", **kw)
    with pytest.raises(InputError, match=r'^line.connector_at_antenna: "pl" is not a known connector series'):
        evaluate_line(connector_at_antenna="pl", **kw)
    with pytest.raises(InputError, match=r"^line.connector_v_peak_rating: 800 rates a connector, but no end has one"):
        evaluate_line(connector_v_peak_rating=800, **kw)
    # coax with different series at the two ends, and the user's rating applied to both
    coax = dict(kw, cable=cable_class("rg-213"), load_ohm=12 - 35j)
    mixed = evaluate_line(connector_at_transmitter="uhf", connector_at_antenna="n", **coax)
    ratings = {p.part: p.rating for p in mixed.part_stresses if p.part.startswith("connector")}
    assert ratings == {"connector.transmitter": 500.0, "connector.antenna": 1500.0}
    rated = evaluate_line(connector_at_transmitter="uhf", connector_at_antenna="n", connector_v_peak_rating=900.0,
                          **coax)
    assert {p.rating for p in rated.part_stresses if p.part.startswith("connector")} == {900.0}


def test_not_rated_is_never_ok():
    """A line class without a voltage or power rating, and tuner parts without ratings, say "not rated"."""
    r = evaluate_line(pep_w=100.0, avg_power_w=100.0, freq_hz=7.1e6, cable=cable_class("window-450"), length_m=20.0,
                      load_ohm=300 + 100j, tuner=TunerSpec("t", capacitor_max_voltage_v_peak=4000.0))
    status = {p.part: p.status for p in r.part_stresses}
    assert status == {"line": "not rated", "line.heating": "not rated", "tuner.C1": "ok", "tuner.L1": "not rated",
                      "tuner.C2": "ok"}
    assert r.not_rated_parts == ("line", "line.heating", "tuner.L1")
    assert r.first_failure.endswith("; not rated: line, line.heating, tuner.L1")


def _tuner_part_worst_stress(kw, tuner, name, swr, r_v0, n_phases=720):
    """Largest stress of one tuner part over load phases at one SWR, with the line transformed by scikit-rf and
    the T retuned for each load at the virtual resistance r_v0 kept (1.2 x the least Q where r_v0 cannot
    match), as the result states (brute force, independent of rfsafe's search)."""
    import dataclasses
    c, f, length = kw["cable"], kw["freq_hz"], kw["length_m"]
    ref = evaluate_line(tuner=tuner, **kw)
    gam = complex(np.log(10) / 20 * ref.matched_loss_db / length + 2j * np.pi * f / (c.velocity_factor * 299792458.0))
    from rfsafe.feedline.matching import design_tuner
    g = (swr - 1) / (swr + 1)
    worst = 0.0
    for ph in np.linspace(0, 2 * np.pi, n_phases, endpoint=False):
        zl = c.z0_ohm * (1 + g * np.exp(1j * ph)) / (1 - g * np.exp(1j * ph))
        zin = complex(np.squeeze(tf.zl_2_zin(c.z0_ohm, zl, gam * length)))
        spec = tuner
        if r_v0 is not None:  # a T keeps its virtual resistance
            r_v = max(r_v0, 1.44 * max(50.0, abs(zin) ** 2 / zin.real))
            spec = dataclasses.replace(tuner, loaded_q=math.sqrt(r_v / min(50.0, zin.real) - 1))
        net = design_tuner(spec, load_ohm=zin, freq_hz=f, input_power_w=kw["pep_w"], target_ohm=50.0).network
        p = next(p for p in net.parts if p.name == name)
        worst = max(worst, p.voltage_v_peak if p.kind == "capacitor" else p.current_a_rms)
    return worst


def test_tuner_part_tolerable_swr_and_first_failure():
    """Each rated tuner part gets a largest tolerable SWR: just below it no load phase exceeds the rating,
    just above it some phase does (brute force over 720 phases; a tolerance of 0.5 % in SWR covers the
    brute force's phase step). The part with the lowest one is named in the one-line answer."""
    kw = dict(pep_w=400.0, avg_power_w=400.0, freq_hz=3.6e6, cable=cable_class("window-450"), length_m=15.0,
              load_ohm=600 - 900j)
    tuner = TunerSpec("t", capacitor_max_voltage_v_peak=3000.0, inductor_max_current_a_rms=8.0)
    r = evaluate_line(tuner=tuner, **kw)
    tol = {p.part: p.largest_tolerable_swr for p in r.part_stresses if p.part.startswith("tuner.")}
    assert all(v is not None for v in tol.values())
    s_l = tol["tuner.L1"]
    assert 1 < s_l < 100
    rating = 8.0
    net = r.tuner.network
    r_v0 = min(50.0, net.load_ohm.real) * (1 + net.loaded_q ** 2)
    assert "T kept at its present virtual resistance" in next(p for p in r.part_stresses
                                                              if p.part == "tuner.L1").tolerable_swr_note
    assert _tuner_part_worst_stress(kw, tuner, "L1", s_l * 0.995, r_v0) <= rating * (1 + 1e-9)
    assert _tuner_part_worst_stress(kw, tuner, "L1", s_l * 1.005, r_v0) > rating
    first = min(tol, key=lambda k: tol[k])
    assert r.first_failure_part == first and r.first_failure_swr == pytest.approx(tol[first], rel=1e-15)
    assert r.first_failure.startswith(f"{first} (")
    assert f"fails first, at SWR {tol[first]:.3g} at the antenna end" in r.first_failure


def test_first_failure_when_exceeded_at_swr_1_and_when_never():
    c = cable_class("rg-58")
    hot = evaluate_line(pep_w=1500.0, avg_power_w=10.0, freq_hz=7.1e6, cable=c, length_m=20.0, swr=1.0,
                        connector_v_peak_rating=300.0)
    assert hot.first_failure_swr == 1.0
    assert hot.first_failure.startswith("connector.transmitter (voltage_v_peak) exceeds its rating even with a "
                                        "matched line (SWR 1) at 1500 W PEP")
    # 450 ohm line at 400 W: matched, the line carries sqrt(2 P Z0) = 600 V peak everywhere, above a UHF
    # connector's 500 V (common practice); this load's phase puts only about 277 V at the transmitter end
    lucky = evaluate_line(pep_w=400.0, avg_power_w=400.0, freq_hz=3.6e6, cable=cable_class("window-450"),
                          length_m=15.0, load_ohm=600 - 900j, connector_at_transmitter="uhf")
    conn = next(p for p in lucky.part_stresses if p.part == "connector.transmitter")
    assert conn.status == "ok" and math.sqrt(2 * 400 * 450) > 500
    assert lucky.first_failure.startswith("connector.transmitter (voltage_v_peak) is within its rating only at this "
                                          "load's phase: it would exceed it even with a matched line (SWR 1)")
    cool = evaluate_line(pep_w=1.0, avg_power_w=1.0, freq_hz=7.1e6, cable=cable_class("rg-213"), length_m=20.0,
                         swr=2.0, connector="n")
    assert math.isinf(cool.first_failure_swr) and cool.first_failure_part is None
    assert cool.first_failure.startswith("no rated part reaches its rating at any SWR at 1 W PEP")
    bare = evaluate_line(pep_w=1.0, avg_power_w=1.0, freq_hz=7.1e6, cable=cable_class("open-wire-600"),
                         length_m=20.0, swr=2.0)
    assert bare.first_failure == ("no part has a rating: which part fails first cannot be said; not rated: line, "
                                  "line.heating")


# --- why a null is a null: explicit case fields (JSON writes both None and inf as null) ----------
def _line(**kw):
    from rfsafe.feedline import cable_class, evaluate_line

    base = dict(pep_w=100.0, avg_power_w=100.0, freq_hz=14.2e6, cable=cable_class("rg-213"), length_m=30.0, swr=2.0)
    base.update(kw)
    return evaluate_line(**base)


def _case(res, part):
    p = next(p for p in res.part_stresses if p.part == part)
    return p.largest_tolerable_swr_case, p.largest_tolerable_swr


def test_largest_tolerable_swr_case_never_reached_and_at():
    # RG-213 at 100 W: 3700 V rms (MIL-C-17G) is not reached at any SWR (line loss bounds the voltage)
    assert _case(_line(), "line") == ("never_reached", float("inf"))
    # UHF connector (500 V peak) at 1500 W: reached at a finite SWR
    case, swr = _case(_line(pep_w=1500.0, avg_power_w=100.0, connector="uhf"), "connector.transmitter")
    assert case == "at" and 1 < swr < 10


def test_largest_tolerable_swr_case_exceeded_at_swr_1_and_not_rated():
    from rfsafe.feedline import cable_class

    # 60 kW into RG-58 (1400 V rms = 1980 V peak, MIL-C-17G): matched voltage sqrt(2 P Z0) = 2449 V peak
    res = _line(pep_w=60e3, avg_power_w=1.0, cable=cable_class("rg-58"))
    assert _case(res, "line") == ("exceeded_at_swr_1", None)
    # ladder line: no voltage or power figure is published for the class
    res = _line(cable=cable_class("window-450"), swr=1.0)
    assert _case(res, "line")[0] == "not_rated"
    assert res.headroom_case["line"] == "not_rated" and res.first_failure_case == "none_rated"


def test_headroom_case_zero_stress_and_not_computed():
    # average power 0 W: no heating (headroom infinite) and no tolerable SWR for heating
    res = _line(avg_power_w=0.0)
    heat = next(p for p in res.part_stresses if p.part == "line.heating")
    assert heat.headroom_case == "zero_stress"
    assert heat.largest_tolerable_swr_case == "not_computed"
    assert res.largest_tolerable_swr_case["line.heating"] == "not_computed"


def test_case_fields_reach_the_json():
    from rfsafe.cli.output import to_jsonable

    data = to_jsonable(_line(connector="uhf"))
    assert set(data["largest_tolerable_swr_case"]) == {p["part"] for p in data["part_stresses"]}
    assert all(p["largest_tolerable_swr_case"] and p["headroom_case"] for p in data["part_stresses"])
    assert data["first_failure_case"] in ("at", "never_reached", "exceeded_at_swr_1", "not_reached_in_search",
                                          "none_rated", "not_computed")
    assert data["part_stresses"][0]["rating_verification"].startswith("partly read")   # RG-213 row


def test_pi_part_tolerable_swr_against_brute_force():
    """A pi network at a fixed loaded Q: the load-side capacitor's largest tolerable SWR brackets the brute-force
    crossing over 720 load phases (0.5 % in SWR)."""
    kw = dict(pep_w=1000.0, avg_power_w=1000.0, freq_hz=7.1e6, cable=cable_class("rg-213"), length_m=30.0,
              load_ohm=12 - 35j)
    tuner = TunerSpec("pi", loaded_q=6.0, capacitor_max_voltage_v_peak=1000.0)
    r = evaluate_line(tuner=tuner, **kw)
    s_c2 = next(p for p in r.part_stresses if p.part == "tuner.C2").largest_tolerable_swr
    assert 1 < s_c2 < 100
    assert _tuner_part_worst_stress(kw, tuner, "C2", s_c2 * 0.995, None) <= 1000.0 * (1 + 1e-9)
    assert _tuner_part_worst_stress(kw, tuner, "C2", s_c2 * 1.005, None) > 1000.0


@pytest.mark.parametrize("case", ["swr", "load", "exact", "tuner_tx", "tuner_ant", "balun", "exceeded"])
def test_without_tolerable_swr_every_other_field_is_the_same(case):
    """``tolerable_swr=False`` (the remedies' repeated evaluations) is a shortcut: tested against the path it
    replaces. Every field but the tolerable SWRs and the first failure is the same number, bit for bit."""
    import dataclasses

    from rfsafe.feedline.balun import BalunSpec
    from rfsafe.feedline.stress import TOLERABLE_SWR_SKIPPED

    kw = dict(pep_w=400.0, avg_power_w=200.0, freq_hz=7.1e6, cable=cable_class("rg-213"), length_m=25.0,
              connector="uhf")
    kw.update({"swr": dict(swr=2.5), "load": dict(load_ohm=30 - 40j), "exact": dict(swr=3.0, exact_complex_z0=True),
               "tuner_tx": dict(load_ohm=12 - 35j, tuner=TunerSpec("t", capacitor_max_voltage_v_peak=3000.0,
                                                                  inductor_max_current_a_rms=8.0)),
               "tuner_ant": dict(load_ohm=12 - 35j, tuner=TunerSpec("pi", position="antenna", loaded_q=5.0,
                                                                   capacitor_max_voltage_v_peak=2000.0)),
               "balun": dict(load_ohm=200 + 50j, balun=BalunSpec(4.0, "antenna", power_rating_w=300.0)),
               "exceeded": dict(swr=8.0, pep_w=1500.0, avg_power_w=1500.0, length_m=60.0)}[case])
    full, lean = evaluate_line(**kw), evaluate_line(tolerable_swr=False, **kw)
    swr_fields = {"largest_tolerable_swr", "tolerable_swr_note", "largest_tolerable_swr_case"}
    first = {"first_failure", "first_failure_part", "first_failure_swr", "first_failure_case"}

    def same(a, b):
        if isinstance(a, np.ndarray):
            return a.dtype == b.dtype and np.array_equal(a, b)
        return type(a) is type(b) and (a == b or (a != a and b != b))

    for f in dataclasses.fields(full):
        a, b = getattr(full, f.name), getattr(lean, f.name)
        if f.name in swr_fields | first:
            continue
        if f.name == "part_stresses":
            assert len(a) == len(b)
            for pa, pb in zip(a, b):
                for g in dataclasses.fields(pa):
                    if g.name not in swr_fields:
                        assert same(getattr(pa, g.name), getattr(pb, g.name)), (case, pa.part, g.name)
                assert pb.largest_tolerable_swr is None
                assert pb.tolerable_swr_note == ("no rating" if pb.rating is None else TOLERABLE_SWR_SKIPPED)
        else:
            assert same(a, b), (case, f.name)
    assert any(p.largest_tolerable_swr is not None for p in full.part_stresses)   # the search ran in `full`
    if case == "exceeded":
        assert lean.exceeded_parts and lean.exceeded_parts == full.exceeded_parts
