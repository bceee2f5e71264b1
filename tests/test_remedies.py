"""Remedies and ground-level keep-out distances: every answer, fed back into the evaluation, sits at the limit."""

import math
import re
from pathlib import Path

import pytest

from rfsafe import remedies as R
from rfsafe.assess import assess, assess_with_emitters
from rfsafe.station import load_station

DEMO = Path(__file__).parent.parent / "reports_demo"

#: A station whose garden exceeds: 1.5 kW carrier into an isotropic antenna 3 m up, a place 4 m away
#: (invented test data). 30 MHz-300 MHz keeps the FCC limit flat (0.2 mW/cm^2 uncontrolled). Both antennas
#: declare a small size (aperture_m), so the nearest part of each is 0.1 m nearer than its centre.
FAILING = '''
title = "Remedy test"
standard = "fcc"
ground_reflection = "full"

[[transmitters]]
id = "tx"
pep_w = 1500.0

[[transmitters]]
id = "tx2"
pep_w = 50.0

[[feedlines]]
id = "coax"
cable = "rg-213"
length_m = 10.0

[[antennas]]
id = "iso"
kind = "isotropic"
height_m = 3.0
aperture_m = 0.2

[[antennas]]
id = "vert"
kind = "other"
gain_dbi = 3.0
x_m = -6.0
height_m = 4.0
aperture_m = 0.2

[[configurations]]
id = "six"
freq_mhz = 50.1
transmitter = "tx"
feedline = "coax"
antenna = "iso"
mode = "carrier"
swr = 1.0

[[configurations]]
id = "two"
freq_mhz = 145.0
transmitter = "tx2"
feedline = "coax"
antenna = "vert"
mode = "fm"
swr = 1.2

[[places]]
label = "Garden"
x_m = 4.0
y_m = 0.0
height_m = 1.5
environment = "uncontrolled"
'''


def _load(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return load_station(p)


def _garden_ratio(tmp_path, text, name="fed.toml"):
    res = assess(_load(tmp_path, text, name))
    return next(p for p in res.places if p.label == "Garden").total_ratio


def _at_limit(r):
    # Solved values are the compliant end of the final bracket: ratio in [1 - RATIO_TOLERANCE, 1].
    return 1.0 - R.RATIO_TOLERANCE <= r <= 1.0


def test_solve_crossing_finds_a_power_law_root():
    # closed form: ratio = (x / 7)^2 crosses 1 at x = 7
    x, r = R.solve_crossing(lambda x: (x / 7.0) ** 2, 1.0, (1 / 7) ** 2, 100.0, (100 / 7) ** 2)
    assert x <= 7.0 and x == pytest.approx(7.0, rel=R.RATIO_TOLERANCE)
    # a step: ratio 0.5 below x = 3, 2 above: the answer is the compliant side of the jump
    x, r = R.solve_crossing(lambda x: 0.5 if x < 3 else 2.0, 1.0, 0.5, 10.0, 2.0, log_x=False)
    assert x < 3 and x == pytest.approx(3.0, abs=1e-6) and r == 0.5


def test_solve_crossing_refuses_a_bracket_without_a_crossing():
    with pytest.raises(ValueError):
        R.solve_crossing(lambda x: x, 1.0, 2.0, 3.0, 3.0)


@pytest.fixture(scope="module")
def failing(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("rem")
    loaded = _load(tmp, FAILING)
    res = assess(loaded)
    return tmp, loaded, res, {p.place: p for p in R.place_remedies(loaded, res)}


def _remedy(rems, parameter, applies_to):
    return next(r for r in rems.remedies if r.parameter == parameter and r.applies_to == applies_to)


def test_failing_place_gets_remedies(failing):
    tmp, loaded, res, by_place = failing
    assert res.places[0].verdict == "exceeds"
    rem = by_place["Garden"]
    assert rem.total_ratio == pytest.approx(res.places[0].total_ratio)
    assert {r.parameter for r in rem.remedies} == {"pep_w", "avg_power_w", "schedule_on_minutes", "line_loss_db",
                                                   "antenna_height_m", "distance_m"}
    for r in rem.remedies:
        assert r.status in ("solved", "no value helps", "not applicable")
        if r.status == "solved":
            assert _at_limit(r.ratio_at_value), r


def test_largest_pep_fed_back_into_the_station_file(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "pep_w", "transmitter tx")
    assert r.status == "solved" and r.value < 1500
    text = FAILING.replace("pep_w = 1500.0", f"pep_w = {r.value!r}")
    assert _at_limit(_garden_ratio(tmp, text))


def test_largest_pep_agrees_with_the_prediction_equation(failing):
    # OET Bulletin 65 (1997), section 2, eq. (3) solved for power: S = P G F / (4 pi R^2) at the limit.
    # The 2 m configuration's own share stays; the 6 m share may use 1 - that share of the limit.
    tmp, loaded, res, by_place = failing
    place = res.places[0]
    six = next(x for x in place.exposures if x.configuration == "six")
    two = next(x for x in place.exposures if x.configuration == "two")
    s_lim = 0.2 * 10.0            # 47 CFR 1.1310 Table 1, 30-300 MHz uncontrolled, 0.2 mW/cm^2 in W/m^2
    loss = next(c for c in res.configurations if c.id == "six").loss_fraction
    pep = (1 - two.exposure_ratio) * s_lim * 4 * math.pi * six.dist_m ** 2 / (1.0 * 4.0 * loss)
    r = _remedy(by_place["Garden"], "pep_w", "transmitter tx")
    assert r.value == pytest.approx(pep, rel=R.RATIO_TOLERANCE)


def test_schedule_fed_back(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "schedule_on_minutes", "configuration six")
    assert r.status == "solved" and 0 < r.value < 30     # 47 CFR 1.1310: 30 min uncontrolled averaging
    text = FAILING.replace('mode = "carrier"\n',
                           f'mode = "carrier"\nschedule = {{ on_minutes = {r.value!r}, off_minutes = {30 - r.value!r} }}\n')
    assert _at_limit(_garden_ratio(tmp, text))


def test_average_power_fed_back_as_duty_factor(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "avg_power_w", "configuration six")
    duty = r.value / 1500.0     # carrier, continuous: fill 1
    text = FAILING.replace('mode = "carrier"\n', f'mode = "carrier"\nduty_factor = {duty!r}\n')
    assert _at_limit(_garden_ratio(tmp, text))


def test_line_loss_fed_back_as_connector_loss(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "line_loss_db", "configuration six")
    extra = r.value - r.current
    # the 6 m configuration gets its own feedline with the extra loss
    text = FAILING.replace('feedline = "coax"\nantenna = "iso"', 'feedline = "coax6"\nantenna = "iso"') + f'''
[[feedlines]]
id = "coax6"
cable = "rg-213"
length_m = 10.0
connector_loss_db = {extra!r}
'''
    assert _at_limit(_garden_ratio(tmp, text))


def test_height_fed_back(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "antenna_height_m", "antenna iso")
    assert r.status == "solved" and r.value > 3.0
    text = FAILING.replace('kind = "isotropic"\nheight_m = 3.0', f'kind = "isotropic"\nheight_m = {r.value!r}')
    assert _at_limit(_garden_ratio(tmp, text))


def test_distance_fed_back(failing):
    tmp, loaded, res, by_place = failing
    r = _remedy(by_place["Garden"], "distance_m", "place Garden")
    assert r.status == "solved" and r.value > 4.0
    text = FAILING.replace('x_m = 4.0', f'x_m = {r.value!r}')
    assert _at_limit(_garden_ratio(tmp, text))


def test_no_value_helps_when_the_others_alone_exceed(tmp_path):
    # the 2 m station alone far above the limit: nothing done to the 6 m configuration helps
    # (the 6 m station at 100 W alone complies: the 2 m transmitter's PEP is the one thing that helps)
    text = (FAILING.replace("pep_w = 50.0", "pep_w = 5000.0").replace("pep_w = 1500.0", "pep_w = 100.0")
            .replace('mode = "fm"\nswr = 1.2', 'mode = "fm"\nswr = 1.0'))
    loaded = _load(tmp_path, text)
    res = assess(loaded)
    rem = R.place_remedies(loaded, res)[0]
    assert _remedy(rem, "pep_w", "transmitter tx").status == "no value helps"
    assert _remedy(rem, "schedule_on_minutes", "configuration six").status == "no value helps"
    assert _remedy(rem, "antenna_height_m", "antenna iso").status == "no value helps"
    assert _remedy(rem, "pep_w", "transmitter tx2").status == "solved"


def test_configuration_headroom_when_compliant():
    loaded = load_station(DEMO / "demo_station.toml")
    res = assess(loaded)
    assert all(p.verdict == "complies" for p in res.places)
    out = R.configuration_remedies(loaded, res)
    assert [c.configuration for c in out] == [c.id for c in res.configurations]
    for c in out:
        pep = _remedy(c, "pep_w", f"transmitter {c.transmitter}")
        assert pep.status == "solved" and pep.value > pep.current and _at_limit(pep.ratio_at_value)
        # feed back: the worst place reaches the limit
        assert _at_limit(R.total_ratio(R._set_pep(loaded, c.transmitter, pep.value)))


def test_wire_station_remedies_use_the_near_field_solver():
    loaded = load_station(DEMO / "demo_wire_station.toml")
    res = assess(loaded)
    rem = R.place_remedies(loaded, res)[0]
    pep = _remedy(rem, "pep_w", "transmitter hf-amplifier")
    assert pep.status == "solved" and _at_limit(R.total_ratio(R._set_pep(loaded, "hf-amplifier", pep.value),
                                                               rem.place))
    # the vertical stands on the ground: raising it is not a remedy
    assert _remedy(rem, "antenna_height_m", "antenna wire-vertical-20m").status == "not applicable"


def test_ground_keep_out_equals_the_projection_of_the_compliance_distance(tmp_path):
    # Peak gain, far field (OET Bulletin 65 section 2): the ratio is 1 at distance D from the nearest part of
    # the antenna, here its centre less half the declared aperture_m (0.2 m), so at height z it is 1 where
    # sqrt(r^2 + (h - z)^2) - 0.1 = D: the horizontal keep-out is sqrt((D + 0.1)^2 - (h - z_nearest)^2).
    text = FAILING.replace("pep_w = 1500.0", "pep_w = 400.0").replace("height_m = 3.0", "height_m = 2.5")
    loaded = _load(tmp_path, text)
    res, ems = assess_with_emitters(loaded)
    keep = [k for k in R.ground_keep_out(loaded, res, ems) if k.configuration == "six"]
    assert {k.environment for k in keep} == {"controlled", "uncontrolled"}
    for k in keep:
        d = k.compliance_dist_m
        dz = min(abs(z - 2.5) for z in k.heights_m)
        expected = math.sqrt(max((d + 0.1) ** 2 - dz * dz, 0.0))
        assert k.keep_out_m == pytest.approx(expected, rel=5e-3, abs=1e-3)
        assert k.directions == 1


def test_ground_keep_out_lists_declared_upper_floors():
    loaded = load_station(DEMO / "demo_station.toml")
    res, ems = assess_with_emitters(loaded)
    levels = {k.level for k in R.ground_keep_out(loaded, res, ems)}
    assert any(re.search(r"4\.5 m", lv) for lv in levels)      # the upstairs bedroom
    assert any("standing person" in lv for lv in levels)


def test_site_remedies_clear_the_violation_when_fed_back():
    import dataclasses

    from rfsafe.site import assess_site, load_site
    from rfsafe.site.analysis import analyse_site

    loaded = load_site(DEMO / "event_field_day.toml")
    res = assess_site(loaded)
    assert res.violations
    rems = R.site_remedies(res)
    assert len(rems) == len(res.violations) * len(res.transmitters)
    solved = [r for r in rems if r.power_status == "solved"]
    assert solved
    m = loaded.model
    for r in solved:
        ems = [dataclasses.replace(em, power_w=tuple(p * r.power_factor for p in em.power_w))
               if em.transmitter == r.transmitter else em for em in res.emitters]
        again = analyse_site(ems, boundary=loaded.boundary, areas=loaded.areas, heights_m=m.heights_m,
                             grid_spacing_m=m.grid_spacing_m)
        region = next(g for g in again.regions if g.label == r.violation)
        assert region.points_over == 0
        assert region.worst_ratio[r.environment] >= 1.0 - R.RATIO_TOLERANCE
        if r.move_status == "solved":
            # at the limit, or short of it where the sampled ratio jumps (said in the text)
            assert _at_limit(r.ratio_after_move) or (r.ratio_after_move <= 1.0 and "jumps there" in r.text)


# --- Re-evaluation shortcuts (issue 18): the same numbers as the full evaluation, bit for bit ---
# Identities, not reference values: place_totals and place_ratios are the evaluation itself with work the
# answer never reads left out, so their numbers must equal assess's exactly (no tolerance).


@pytest.mark.parametrize("name", ["demo_station.toml", "demo_wire_station.toml"])
def test_place_totals_equal_a_fresh_evaluation_of_a_modified_station(name):
    from rfsafe.assess import place_totals

    loaded = load_station(DEMO / name)
    memo: dict = {}
    res, _ = assess_with_emitters(loaded, near_field_maps=False, memo=memo)
    assert place_totals(loaded, memo) == [(p.label, p.total_ratio) for p in res.places]
    tx = loaded.model.transmitters[0]
    changed = R._set_pep(loaded, tx.id, tx.pep_w * 0.37)      # one transmitter changed, the rest from memo
    fresh = assess(changed)
    assert place_totals(changed, memo) == [(p.label, p.total_ratio) for p in fresh.places]
    assert place_totals(changed) == [(p.label, p.total_ratio) for p in fresh.places]   # without memo


def test_place_totals_keep_an_input_error_as_exceeding():
    # a place moved onto the wire vertical (its body heights on the wire) is refused by the evaluation, with
    # or without the memo; the remedies count it as exceeding
    from rfsafe.errors import InputError

    loaded = load_station(DEMO / "demo_wire_station.toml")
    memo: dict = {}
    assess_with_emitters(loaded, near_field_maps=False, memo=memo)
    label = "Garden path beside the vertical"
    on_wire = R._move_place(loaded, label, 12.0, 0.0)
    with pytest.raises(InputError):
        assess(on_wire)
    with R._reused_evaluations(memo):
        assert R.total_ratio(on_wire, label) == math.inf
        assert R.total_ratio(on_wire, label) == math.inf       # the kept error, raised again
        assert R.total_ratio(loaded, label) == next(p.total_ratio for p in assess(loaded).places if p.label == label)


@pytest.mark.parametrize("name", ["demo_station.toml", "demo_wire_station.toml"])
def test_place_ratios_equal_the_place_by_place_evaluation(name):
    """The keep-out scan evaluates many places together; each ratio is the one a declared place gets."""
    from rfsafe.assess import _place_exposure, place_ratios
    from rfsafe.errors import InputError
    from rfsafe.station.schema import Place

    loaded = load_station(DEMO / name)
    res, ems = assess_with_emitters(loaded, near_field_maps=False)
    by_id = {c.id: c for c in res.configurations}
    checked = 0
    for em in ems:
        cres = by_id[em.configuration]
        reach = max(cres.near_field_distance_m, max(d.dist_m for d in cres.compliance_distances)) * 1.05
        # a line through the antenna's foot, out past the near-field boundary: the pattern's inside/outside
        # switch, the near-field/far-field switch of a wire, and for a wire standing on the ground its wire
        for env in ("controlled", "uncontrolled"):
            for heights in ([0.5, 1.0, 1.5, 2.0], [4.5]):
                rs = [reach * k / 12 for k in range(13)]
                xs = [em.x_m + r * 0.6 for r in rs]
                ys = [em.y_m + r * 0.8 for r in rs]
                batch = place_ratios(em, loaded, cres, env, xs, ys, heights)
                for x, y, q in zip(xs, ys, batch):
                    place = Place.model_construct(label="p", x_m=x, y_m=y, height_m=heights[0],
                                                  body_heights_m=list(heights), environment=env)
                    try:
                        one = _place_exposure(em, loaded, 0, place, cres, em.solution).exposure_ratio
                    except InputError:
                        one = math.inf
                    assert q == one, (em.configuration, env, x, y)
                    checked += 1
    assert checked >= 4 * 2 * 2 * 13


def test_remedies_from_the_first_evaluation_equal_remedies_solved_afresh():
    loaded = load_station(DEMO / "demo_wire_station.toml")
    res = R.with_answers(loaded, near_field_maps=False)
    plain = assess(loaded)
    R._budget[:] = [R.EVALUATION_BUDGET]
    try:
        places = R.place_remedies(loaded, plain)     # no memo from the first evaluation
        configs = R.configuration_remedies(loaded, plain)
    finally:
        R._budget.clear()
    assert places == res.place_remedies
    assert configs == res.configuration_remedies


@pytest.mark.parametrize("name", ["demo_station.toml", "demo_wire_station.toml"])
def test_kept_extents_distances_and_gains_give_the_answers_computed_afresh(name, monkeypatch):
    """Extents shared per antenna and frequency, and the distances, pattern gains and wire distances kept
    per structure and points (assess._kept), change no number: the whole evaluation with its keep-out and
    remedies equals the one computed with nothing kept (every extent made anew, every value recomputed)."""
    import rfsafe.antenna.extent as extent_module
    import rfsafe.assess as assess_module
    from rfsafe.cli.output import dump_json

    loaded = load_station(DEMO / name)
    kept = dump_json(R.with_answers(loaded, near_field_maps=False))
    again = dump_json(R.with_answers(loaded, near_field_maps=False))   # now served from what was kept
    monkeypatch.setattr(extent_module, "_MADE_ENTRIES", 0)
    monkeypatch.setattr(assess_module, "_kept", lambda owners, key, compute, points: compute())
    fresh = dump_json(R.with_answers(load_station(DEMO / name), near_field_maps=False))
    assert kept == fresh
    assert again == fresh


def test_kept_values_are_dropped_oldest_first_beyond_their_point_budget(monkeypatch):
    import numpy as np

    import rfsafe.assess as assess_module

    monkeypatch.setattr(assess_module, "_kept_values", {})
    monkeypatch.setattr(assess_module, "_KEPT_POINTS", 10)
    owner = object()
    first = assess_module._kept((owner,), ("k", 1), lambda: np.zeros(6), 6)
    assert not first.flags.writeable                        # handed out again: nobody may change it
    assert assess_module._kept((owner,), ("k", 1), lambda: np.ones(6), 6) is first
    assess_module._kept((owner,), ("k", 2), lambda: np.ones(6), 6)   # 12 points > 10: the oldest goes
    assert ("k", 1) not in {k[1] for k in assess_module._kept_values if k != "points"}
    assert assess_module._kept_values["points"] == 6


def test_memoised_configuration_keys_are_the_fresh_ones():
    # place_totals' memo keeps each frozen model's JSON per object: the key is the one made afresh, and a
    # changed model (a new object, as the remedies' trials make) is dumped anew (the key sees the change)
    from rfsafe.assess import _configuration_key

    loaded = load_station(DEMO / "demo_wire_station.toml")
    memo: dict = {}
    for c in loaded.model.configurations:
        assert _configuration_key(loaded, c, memo) == _configuration_key(loaded, c)
        assert _configuration_key(loaded, c, memo) == _configuration_key(loaded, c)   # from the memo
    c = loaded.model.configurations[0]
    changed = c.model_copy(update={"swr": 2.0})
    assert _configuration_key(loaded, changed, memo) == _configuration_key(loaded, changed)
    assert _configuration_key(loaded, changed, memo) != _configuration_key(loaded, c, memo)
