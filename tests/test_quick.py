"""Quick questions: the in-memory station equals the equivalent station file; sweeps equal single runs."""

import math

import pytest

from rfsafe.assess import assess
from rfsafe.errors import InputError
from rfsafe.quick import AMATEUR_BANDS, QuickQuestion, answer, band_edges, question_station, sweep
from rfsafe.station import load_station

# The station file a user would write for: 400 W SSB on 14.2 MHz, 20 m of RG-213 at SWR 1.5, a half-wave
# dipole 8 m up, a standing person 6 m from its foot (invented test data).
EQUIVALENT = '''
standard = "fcc"
ground_reflection = "full"

[[transmitters]]
id = "tx"
pep_w = 400.0

[[feedlines]]
id = "line"
cable = "rg-213"
length_m = 20.0

[[antennas]]
id = "antenna"
kind = "half-wave-dipole"
height_m = 8.0

[[configurations]]
id = "question"
freq_mhz = 14.2
transmitter = "tx"
feedline = "line"
antenna = "antenna"
mode = "ssb"
swr = 1.5

[[places]]
label = "c"
x_m = 6.0
y_m = 0.0
height_m = 2.0
body_heights_m = [0.5, 1.0, 1.5, 2.0]
environment = "controlled"

[[places]]
label = "u"
x_m = 6.0
y_m = 0.0
height_m = 2.0
body_heights_m = [0.5, 1.0, 1.5, 2.0]
environment = "uncontrolled"
'''

Q = QuickQuestion(pep_w=400.0, freq_mhz=14.2, mode="ssb", antenna="half-wave-dipole", cable="rg-213",
                  length_m=20.0, swr=1.5, height_m=8.0, distance_m=6.0)


def test_quick_answer_equals_the_equivalent_station_file(tmp_path):
    path = tmp_path / "eq.toml"
    path.write_text(EQUIVALENT)
    ref = assess(load_station(path))
    a = answer(Q)
    cfg = ref.configurations[0]
    for d in cfg.compliance_distances:
        assert a.compliance_dist_m[d.environment] == d.dist_m       # same evaluation: identical numbers
    assert a.line_loss_db == cfg.line_loss_db and a.eirp_w == cfg.eirp_w
    for p in ref.places:
        assert a.ratio_at_distance[p.environment] == p.total_ratio
    assert a.exemption.startswith("exempt" if ref.exemption.exempt else "not exempt")


def test_largest_pep_at_the_distance_is_at_the_limit(tmp_path):
    a = answer(Q)
    for env, pep in a.largest_pep_w.items():
        ratio = answer(QuickQuestion(**{**Q.__dict__, "pep_w": pep})).ratio_at_distance[env]
        assert 0.998 <= ratio <= 1.0          # rfsafe.remedies.RATIO_TOLERANCE
        # every ratio is proportional to PEP here (far field, one source): closed form 400 W / ratio
        assert pep == pytest.approx(400.0 / a.ratio_at_distance[env], rel=2e-3)


def test_no_cable_means_no_line_loss_and_level_person():
    a = answer(QuickQuestion(pep_w=100.0, freq_mhz=50.1, gain_dbi=0.0, distance_m=3.0, size_m=0.4))
    assert a.line_loss_db == 0.0
    # OET Bulletin 65 section 2: S = P G F / (4 pi R^2), F = 4 (full reflection), carrier (duty 1), R from the
    # nearest part of the antenna (3 m less half its 0.4 m size);
    # 47 CFR 1.1310 Table 1, 30-300 MHz uncontrolled: 0.2 mW/cm^2 = 2 W/m^2.
    s = 100.0 * 1.0 * 4.0 / (4 * math.pi * (3.0 - 0.2) ** 2)
    assert a.ratio_at_distance["uncontrolled"] == pytest.approx(s / 2.0, rel=1e-9)
    # without a size the answer can only be larger (the nearest part is taken conservatively)
    b = answer(QuickQuestion(pep_w=100.0, freq_mhz=50.1, gain_dbi=0.0, distance_m=3.0))
    assert b.ratio_at_distance["uncontrolled"] >= a.ratio_at_distance["uncontrolled"]


def test_sweep_rows_equal_single_answers():
    rows = sweep(Q, freqs_mhz=[7.1, 21.2], powers_w=[100.0, 1000.0])
    assert [(r.freq_mhz, r.pep_w) for r in rows] == [(7.1, 100.0), (7.1, 1000.0), (21.2, 100.0), (21.2, 1000.0)]
    for r in rows:
        single = answer(QuickQuestion(**{**Q.__dict__, "freq_mhz": r.freq_mhz, "pep_w": r.pep_w}))
        assert r.compliance_dist_m == single.compliance_dist_m
        assert r.ratio_at_distance == single.ratio_at_distance


def test_band_sweep_keeps_the_worse_edge():
    rows = sweep(Q, bands=["20m"])
    lo, hi = AMATEUR_BANDS["20m"]
    edges = [answer(QuickQuestion(**{**Q.__dict__, "freq_mhz": f})) for f in (lo, hi)]
    worst = max(e.compliance_dist_m["uncontrolled"] for e in edges)
    assert rows[0].band == "20m" and rows[0].compliance_dist_m["uncontrolled"] == worst


def test_band_groups_and_unknown_band():
    assert [b[0] for b in band_edges(["hf"])][:2] == ["160m", "80m"]
    with pytest.raises(InputError, match=r"^--bands: "):
        band_edges(["11m"])


def test_errors_name_the_option():
    with pytest.raises(InputError, match=r"^--gain-dbi: "):
        question_station(QuickQuestion(pep_w=100.0, freq_mhz=14.2))
    with pytest.raises(InputError, match=r"^--mode: "):
        question_station(QuickQuestion(pep_w=100.0, freq_mhz=14.2, gain_dbi=0.0, mode="telepathy"))
    with pytest.raises(InputError, match=r"^--length-m: "):
        question_station(QuickQuestion(pep_w=100.0, freq_mhz=14.2, gain_dbi=0.0, cable="rg-213"))
