"""Tests of rfsafe.limits.exemption against 47 CFR 1.1307(b)(3) (as amended by FCC 19-126).

The 1 mW test (i)(A), Table 1 of (i)(C) with its worked values and the sum of fractions (ii)(B) were
read in the eCFR text of 47 CFR 1.1307 (READ, see the project's published-values reference); the
constants of the SAR-based formula (i)(B) appear there only as an image and were not read: those
checks stay "from memory". Expected values are the regulation's expressions written out; tolerances
rel 1e-12 where the same expression is evaluated (float rounding only) unless stated.
"""

from __future__ import annotations

import math

import pytest

from rfsafe.errors import InputError
from rfsafe.limits import limits_at
from rfsafe.limits.exemption import (
    NOTE,
    ExemptionSource,
    erp_20cm_w,
    erp_w,
    fcc_exemption,
    mpe_erp_min_separation_m,
    mpe_erp_threshold_w,
    sar_threshold_w,
)

REL = 1e-12


def src(f_mhz, p_w, g_dbi, d_m, label="tx"):
    return ExemptionSource(label=label, freq_hz=f_mhz * 1e6, avg_power_w=p_w, gain_dbi=g_dbi, separation_m=d_m)


# --- MPE-based ERP thresholds, Table 1 to 1.1307(b)(3)(i)(C) (READ: eCFR text after FCC 19-126) --
@pytest.mark.parametrize("f_mhz,r_m,want_w,printed_w", [
    # 47 CFR 1.1307(b)(3)(i)(C) Table 1, 1.34-30 MHz, 3,450 R^2/f^2: 14.2 MHz, R = 5 m -> 427.74 W (READ)
    (14.2, 5.0, 3450 * 5.0**2 / 14.2**2, 427.74),
    # Table 1, 30-300 MHz, 3.83 R^2: 144.2 MHz, R = 2 m -> 15.32 W (READ)
    (144.2, 2.0, 3.83 * 2.0**2, 15.32),
    # Table 1, 300-1,500 MHz, 0.0128 R^2 f: 432 MHz, R = 1 m -> 5.5296 W (READ)
    (432.0, 1.0, 0.0128 * 1.0**2 * 432.0, 5.5296),
    # Table 1, 1,500-100,000 MHz, 19.2 R^2: 2400 MHz, R = 0.5 m -> 4.8 W (READ)
    (2400.0, 0.5, 19.2 * 0.5**2, 4.8),
], ids=["1_34_to_30_mhz", "30_to_300_mhz", "300_to_1500_mhz", "1500_to_100000_mhz"])
def test_fcc_1307_b3_table1_worked_values(f_mhz, r_m, want_w, printed_w):
    threshold, _ = mpe_erp_threshold_w(f_mhz * 1e6, r_m)
    assert threshold == pytest.approx(want_w, rel=REL)
    assert threshold == pytest.approx(printed_w, abs=0.005)   # printed to 0.01 W or better
    assert fcc_exemption([src(f_mhz, 1.0, 2.15, r_m)]).per_source[0].threshold_verification.startswith(
        "read in 47 CFR 1.1307(b)(3)(i)(C)")


@pytest.mark.parametrize("f_mhz,r_m,want_w", [
    (1.0, 60.0, 1920 * 60.0**2),                 # Table 1 to 1.1307(b)(3)(i)(C), 0.3-1.34 MHz: 1,920 R^2
    (14.2, 10.0, 3450 * 10.0**2 / 14.2**2),      # 1.34-30 MHz: 3,450 R^2/f^2
    (144.2, 2.0, 3.83 * 2.0**2),                 # 30-300 MHz: 3.83 R^2
    (432.0, 1.0, 0.0128 * 1.0**2 * 432.0),       # 300-1,500 MHz: 0.0128 R^2 f
    (2400.0, 0.5, 19.2 * 0.5**2),                # 1,500-100,000 MHz: 19.2 R^2
])
def test_mpe_erp_table_rows(f_mhz, r_m, want_w):
    threshold, source = mpe_erp_threshold_w(f_mhz * 1e6, r_m)
    assert threshold == pytest.approx(want_w, rel=REL)
    assert "1.1307(b)(3)(i)(C) Table 1" in source


@pytest.mark.parametrize("f_mhz", [1.0, 1.9, 3.6, 14.2, 28.5, 50.1, 144.2, 222.0, 432.0, 902.0, 1296.0, 2400.0, 10368.0])
def test_mpe_erp_coefficients_follow_from_general_population_mpe(f_mhz):
    # Derived check (not a published table): ERP_th = S_MPE * 4 pi R^2 / (1.64 * 4), i.e. the
    # general-population MPE of 47 CFR 1.1310 Table 1 (B) at distance R from a source of EIRP
    # 1.64 ERP with a full-reflection factor of 4 in power density. Tolerance 0.5 %: the table
    # coefficients are rounded to three significant figures (pi*1000/1.64 = 1915.6 -> 1,920).
    (gp,) = limits_at("fcc", f_mhz * 1e6, "uncontrolled")
    r_m = 2.0 * mpe_erp_min_separation_m(f_mhz * 1e6)
    derived = gp.power_density_w_m2 * 4 * math.pi * r_m**2 / (1.64 * 4)
    assert mpe_erp_threshold_w(f_mhz * 1e6, r_m)[0] == pytest.approx(derived, rel=5e-3)


@pytest.mark.parametrize("edge_mhz,lower_row,upper_row", [
    # Table 1 to 1.1307(b)(3)(i)(C) (READ): the text does not say to which row an edge belongs; the
    # smaller threshold applies (issue: the edge took the looser row at 1.34 and 300 MHz)
    (1.34, lambda f: 1920.0, lambda f: 3450 / f**2),
    (30.0, lambda f: 3450 / f**2, lambda f: 3.83),
    (300.0, lambda f: 3.83, lambda f: 0.0128 * f),
    (1500.0, lambda f: 0.0128 * f, lambda f: 19.2),
])
def test_fcc_1307_b3_table1_exact_band_edge_takes_smaller_threshold(edge_mhz, lower_row, upper_row):
    r = 100.0
    threshold, source = mpe_erp_threshold_w(edge_mhz * 1e6, r)
    assert threshold == pytest.approx(min(lower_row(edge_mhz), upper_row(edge_mhz)) * r**2, rel=REL)
    beside = [mpe_erp_threshold_w(edge_mhz * 1e6 * k, r)[0] for k in (1 - 1e-9, 1 + 1e-9)]
    assert threshold <= min(beside) * (1 + 1e-8)   # never looser than just beside the edge
    assert "band edge" in source


@pytest.mark.parametrize("edge_mhz", [1.34, 30.0, 300.0, 1500.0])
def test_mpe_erp_table_is_continuous_at_band_edges(edge_mhz):
    # Table 1 to 1.1307(b)(3)(i)(C): coefficients to three significant figures -> 0.5 %
    r = 100.0
    below = mpe_erp_threshold_w(edge_mhz * 1e6 * (1 - 1e-9), r)[0]
    above = mpe_erp_threshold_w(edge_mhz * 1e6 * (1 + 1e-9), r)[0]
    assert below == pytest.approx(above, rel=5e-3)


def test_lambda_over_2pi_condition_is_enforced():
    # 1.1307(b)(3)(i)(C): "R must be at least lambda/2pi"; lambda/2pi = c/(2 pi f) ~ 47.7/f_MHz m.
    assert mpe_erp_min_separation_m(14.2e6) == pytest.approx(299_792_458 / 14.2e6 / (2 * math.pi), rel=REL)
    assert mpe_erp_min_separation_m(1e6) == pytest.approx(47.7, rel=1e-3)  # 47.71 m, rounded as usually quoted
    r_min = mpe_erp_min_separation_m(14.2e6)
    with pytest.raises(InputError) as err:
        mpe_erp_threshold_w(14.2e6, 3.0)
    assert str(err.value) == ("separation_m: 3.0 is less than lambda/2pi = 3.36 m at 14.2 MHz, where Table 1 "
                              "to 47 CFR 1.1307(b)(3)(i)(C) does not apply")
    assert mpe_erp_threshold_w(14.2e6, r_min)[0] > 0
    res = fcc_exemption([src(14.2, 5.0, 2.15, 3.0)])  # 5 W, dipole, 3 m: inside lambda/2pi
    assert not res.exempt
    assert res.per_source[0].criterion == "none applicable"
    assert res.per_source[0].fraction == math.inf and res.sum_of_fractions == math.inf
    assert any("lambda/2pi" in why for why in res.per_source[0].other_criteria)
    assert "routine evaluation is required" in res.criterion


# --- SAR-based threshold, 1.1307(b)(3)(i)(B) ------------------------------------------------
def test_erp_20cm_is_continuous_at_1_5_ghz():
    # 1.1307(b)(3)(i)(B): ERP_20cm = 2040 f mW (0.3-1.5 GHz), 3060 mW (1.5-6 GHz); 2040 * 1.5 = 3060
    assert erp_20cm_w(1.0e9) == pytest.approx(2.040, rel=REL)
    assert erp_20cm_w(1.5e9 * (1 - 1e-12)) == pytest.approx(3.060, rel=1e-9)
    assert erp_20cm_w(2.45e9) == pytest.approx(3.060, rel=REL)


@pytest.mark.parametrize("f_ghz", [0.3, 0.45, 0.835, 1.9, 2.45, 3.6, 5.8])
def test_sar_threshold_formula_identities(f_ghz):
    # 1.1307(b)(3)(i)(B): P_th = ERP_20cm (d/20)^x for d <= 20 cm, x = -log10(60/(ERP_20cm sqrt f)),
    # P_th = ERP_20cm for 20 < d <= 40 cm.
    f_hz = f_ghz * 1e9
    erp20 = erp_20cm_w(f_hz)
    x = -math.log10(60 / (erp20 * 1e3 * math.sqrt(f_ghz)))
    assert sar_threshold_w(f_hz, 0.05) == pytest.approx(erp20 * (5 / 20) ** x, rel=REL)
    # identity of the formula: at d = 2 cm, (d/20)^x = 10^-x, so P_th = 60/sqrt(f_GHz) mW
    assert sar_threshold_w(f_hz, 0.02) == pytest.approx(60 / math.sqrt(f_ghz) * 1e-3, rel=1e-9)
    # continuous at 20 cm, flat to 40 cm
    assert sar_threshold_w(f_hz, 0.20) == pytest.approx(erp20, rel=REL)
    assert sar_threshold_w(f_hz, 0.2000001) == sar_threshold_w(f_hz, 0.40) == erp20


def test_sar_threshold_agrees_with_a_published_application():
    # READ-2: one published application gives P_th = 2.72 mW at 0.5 cm for a 2.4 GHz-band device,
    # frequency not shown. The formula's constants were not read (from memory); the check is that
    # 2.72 mW lies between P_th at the ends of the 2.4-2.4835 GHz band (band edges: common practice).
    ends = sorted(sar_threshold_w(f, 0.005) for f in (2.4e9, 2.4835e9))
    assert ends[0] <= 2.72e-3 <= ends[1]
    assert fcc_exemption([src(2440, 1e-3 * 2, 0.0, 0.005)]).per_source[0].threshold_verification.startswith(
        "not confirmed")


@pytest.mark.parametrize("f_ghz,d_cm,want_mw", [
    # Table 1 to 1.1307(b)(3)(i)(B) example values, rounded to whole mW (from memory)
    (0.3, 0.5, 39), (0.3, 1.0, 65), (2.45, 0.5, 3), (2.45, 1.0, 10),
])
def test_sar_threshold_example_values(f_ghz, d_cm, want_mw):
    assert round(sar_threshold_w(f_ghz * 1e9, d_cm / 100) * 1e3) == want_mw


@pytest.mark.parametrize("f_mhz,d_m,field", [
    (250.0, 0.1, "freq_hz"), (6100.0, 0.1, "freq_hz"), (2450.0, 0.004, "separation_m"), (2450.0, 0.41, "separation_m"),
])
def test_sar_threshold_outside_its_range_is_refused(f_mhz, d_m, field):
    with pytest.raises(InputError, match=f"^{field}: "):
        sar_threshold_w(f_mhz * 1e6, d_m)


def test_sar_based_compares_greater_of_power_and_erp():
    # 1.1307(b)(3)(i)(B): "available maximum time-averaged power or ERP, whichever is greater".
    # 400 MHz at 10 cm: inside lambda/2pi = 11.9 cm, so only the SAR-based threshold applies.
    low_gain = fcc_exemption([src(400, 0.5, -3.0, 0.10)]).per_source[0]
    assert low_gain.criterion == "SAR-based threshold"
    assert low_gain.value_w == 0.5 and low_gain.erp_w < 0.5
    high_gain = fcc_exemption([src(400, 0.5, 6.0, 0.10)]).per_source[0]
    assert high_gain.value_w == pytest.approx(0.5 * 10 ** ((6.0 - 2.15) / 10), rel=REL)
    assert high_gain.threshold_w == pytest.approx(sar_threshold_w(400e6, 0.10), rel=REL)


def test_smaller_fraction_is_used_where_both_thresholds_apply():
    # 2.45 GHz at 10 cm: SAR-based (0.5-40 cm) and MPE-based (R >= lambda/2pi = 1.95 cm) both apply.
    s = src(2450, 0.2, 2.15, 0.10)
    e = fcc_exemption([s]).per_source[0]
    sar_fraction = 0.2 / sar_threshold_w(2.45e9, 0.10)
    mpe_fraction = erp_w(0.2, 2.15) / mpe_erp_threshold_w(2.45e9, 0.10)[0]
    assert e.fraction == pytest.approx(min(sar_fraction, mpe_fraction), rel=REL)
    assert e.margin_db == pytest.approx(-10 * math.log10(e.fraction), rel=REL)


# --- 1 mW test and several sources -------------------------------------------------------
def test_fcc_1307_b3_i_a_less_than_1_mw():
    # 47 CFR 1.1307(b)(3)(i)(A) (READ): exempt when the available maximum time-averaged power is
    # *less than* 1 mW, regardless of separation; 1.0 mW itself is not exempt under it.
    res = fcc_exemption([src(14.2, 0.999e-3, 10.0, 0.001)])
    assert res.exempt and res.per_source[0].criterion == "1 mW"
    assert res.sum_of_fractions == pytest.approx(0.999, rel=REL)
    assert res.per_source[0].threshold_verification.startswith("read in 47 CFR 1.1307(b)(3)(i)(A)")
    res = fcc_exemption([src(14.2, 1e-3, 10.0, 0.001)])
    assert not res.exempt  # 14.2 MHz at 1 mm: neither SAR- nor MPE-based criterion applies
    assert res.per_source[0].criterion == "none applicable"


def test_several_sources_sum_of_fractions():
    # 47 CFR 1.1307(b)(3)(ii)(B) (READ): exempt when the sum of fractions is <= 1
    a = src(144.2, 10.0, 2.15, 3.0, "2 m vertical")   # ERP_th = 3.83 * 9 = 34.47 W
    b = src(432.0, 5.0, 2.15, 3.0, "70 cm vertical")  # ERP_th = 0.0128 * 9 * 432 = 49.77 W
    res = fcc_exemption([a, b])
    want = 10.0 / (3.83 * 9) + 5.0 / (0.0128 * 9 * 432)
    assert res.sum_of_fractions == pytest.approx(want, rel=REL)
    assert res.exempt and "1.1307(b)(3)(ii)(B)" in res.criterion
    # each below its own threshold, together above: not exempt
    c = src(144.2, 30.0, 2.15, 3.0, "2 m high power")  # 30/34.47 = 0.87
    res = fcc_exemption([c, b, b])
    assert all(e.fraction < 1 for e in res.per_source)
    assert res.sum_of_fractions > 1 and not res.exempt


def test_several_sources_below_1_mw_total():
    # 1.1307(b)(3)(ii)(A): sum of the sources below 1 mW total
    res = fcc_exemption([src(2450, 0.4e-3, 2.0, 0.001, "a"), src(5800, 0.5e-3, 2.0, 0.001, "b")])
    assert res.exempt and res.sum_of_fractions == pytest.approx(0.9, rel=REL)
    assert "1.1307(b)(3)(ii)(A)" in res.criterion


def test_result_states_that_compliance_is_still_required():
    res = fcc_exemption([src(144.2, 1.0, 2.15, 10.0)])
    assert res.note == NOTE
    assert "never removes the duty to comply" in res.note
    assert "47 CFR 1.1310" in res.note


def test_erp_uses_dipole_gain_2_15_dbi():
    # ERP = P * G/1.64; 10^(2.15/10) = 1.6406 (common practice: 1.64)
    assert erp_w(100.0, 2.15) == pytest.approx(100.0, rel=REL)
    assert erp_w(100.0, 0.0) == pytest.approx(100.0 / 1.64, rel=1e-3)


@pytest.mark.parametrize("bad,message", [
    ([], "sources: [] must be a non-empty list of ExemptionSource"),
    ([ExemptionSource("a", 14.2e6, -1.0, 0.0, 5.0)], "sources[0].avg_power_w: -1.0 must be a finite number > 0"),
    ([ExemptionSource("a", 14.2e6, 1.0, 0.0, float("nan"))], "sources[0].separation_m: nan must be a finite number > 0"),
    ([ExemptionSource("a", 0.0, 1.0, 0.0, 5.0)], "sources[0].freq_hz: 0.0 must be a finite number > 0"),
])
def test_bad_input_messages(bad, message):
    with pytest.raises(InputError) as err:
        fcc_exemption(bad)
    assert str(err.value) == message


def test_fcc_1307_b3_ii_sum_of_fractions_exactly_one_is_exempt():
    # 47 CFR 1.1307(b)(3)(ii)(B) (READ): exempt when the sum of fractions is <= 1. Two sources at
    # 144.2 MHz, R = 2 m (threshold 3.83 R^2 = 15.32 W), each at half the threshold ERP: sum exactly 1.
    half = 3.83 * 2.0**2 / 2
    res = fcc_exemption([src(144.2, half, 2.15, 2.0, "a"), src(144.2, half, 2.15, 2.0, "b")])
    assert res.sum_of_fractions == 1.0 and res.exempt
    res = fcc_exemption([src(144.2, half * 1.001, 2.15, 2.0, "a"), src(144.2, half, 2.15, 2.0, "b")])
    assert not res.exempt
