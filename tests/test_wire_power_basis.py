"""The power the wire solver's results are scaled to (rfsafe.antenna.wire.solver.power_basis_w).

Where wires of unequal radius meet (a feedline shield joins a thinner antenna wire through radius steps),
the reduced kernel leaves the impedance matrix slightly unsymmetric, and the terminal power 0.5 Re V I*
then differs from the power the solved currents carry, 0.5 c^H Re(Z) c. Energy conservation (Poynting's
theorem; Harrington, Field Computation by Moment Methods, 1968, Sec. 4: the real part of the reaction is
the power) says the power delivered is what is radiated plus what the loads dissipate: the carried power
meets that balance, the terminal power does not. Results are scaled to the smaller of the two, which never
gives smaller fields per watt than either (the first principle: never understate exposure).
"""

import math
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire.shield import ChokeSweep
from rfsafe.antenna.wire.solver import POWER_BASIS_TOL, carried_power_w, power_basis_w
from rfsafe.errors import InputError

#: A test geometry of our own: a 20 m centre-fed dipole 8 m up, its coax running down and away.
DIPOLE = {"wires": [{"label": "dipole", "points_m": [[-10.0, 0, 8], [10.0, 0, 8]], "radius_m": 0.001}],
          "feeds": [{"wire": "dipole", "position": 0.5}]}
ROUTE = [[0.0, 0.0, 2.5], [-3.0, -6.0, 2.5], [-3.6, -7.8, 0.9]]
PLACES = np.array([[1.0, -1.0, 1.5], [-2.0, -5.0, 1.0], [4.0, 3.0, 1.5]])


def spec(ground="perfect", shield_radius_m=0.005, choke=None, joins="start-side", route=ROUTE):
    shield = {"joins": joins, "route_m": route, "radius_m": shield_radius_m, "far_end": "open"}
    if choke is not None:
        shield["choke"] = choke
    return WireAntennaSpec.model_validate(dict(DIPOLE, ground=ground, shield=shield))


def balance(sol) -> float:
    """Radiated (independent far-field / sin(kR)/R computation) plus load power [W], unit excitation."""
    return sol.radiated_power_w + sol.load_power_w


@pytest.mark.parametrize("freq_mhz", [0.5, 3.6, 14.1, 28.0])
@pytest.mark.parametrize("ground", ["perfect", "free-space"])
def test_carried_power_meets_the_energy_balance_and_the_terminal_power_may_not(freq_mhz, ground):
    # Energy conservation (Harrington 1968, Sec. 4): delivered = radiated + dissipated. The carried power
    # meets it to 1e-5 (the radiated power's own accuracy, tests/test_wire_power_check.py); the terminal
    # power of the same solution is off by up to tens of per cent here (measured 0.5 MHz perfect ground:
    # +42 %), which is why it is not trusted alone.
    sol = solve(spec(ground), freq_mhz * 1e6)
    # energy conservation (Harrington 1968, Sec. 4); tolerance 1e-5: the radiated-power check's accuracy
    assert sol.carried_power_w == pytest.approx(balance(sol), rel=1e-5)
    # the smaller of the two powers (the project's conservative rule; common practice: never understate)
    assert sol.power_w == min(sol.input_power_w, sol.carried_power_w) or (
        abs(sol.carried_power_w / sol.input_power_w - 1) <= POWER_BASIS_TOL and sol.power_w == sol.input_power_w)


def test_terminal_power_overstates_the_balance_at_radius_steps():
    # The defect the basis guards against, measured: a 20 mm shield on a 1 mm wire at 3.6 MHz over perfect
    # ground takes several per cent more power at the terminals than its currents radiate; scaled to the
    # terminal power the fields would be low by the square root of that.
    sol = solve(spec("perfect", shield_radius_m=0.02), 3.6e6)
    # 2 %: a floor under the drift measured with this solver (+31.8 % here), not a published value;
    # the balance itself is energy conservation (Harrington 1968, Sec. 4)
    assert sol.input_power_w > 1.02 * balance(sol)
    assert sol.power_w == sol.carried_power_w
    e_basis, _ = sol.fields_rms(PLACES, 100.0)
    e_terminal = e_basis * math.sqrt(sol.carried_power_w / sol.input_power_w)
    assert np.all(e_basis > 1.01 * e_terminal)


def test_one_radius_keeps_the_terminal_power_to_the_last_digit():
    # Reciprocity (Harrington 1968, Sec. 4): on wires of one radius Z is symmetric, the two powers agree
    # to rounding, and results stay scaled to the terminal power exactly.
    sol = solve(spec("perfect", shield_radius_m=0.001), 7.1e6)
    # 1e-9: rounding of two dense products (common practice), symmetry by reciprocity (Harrington 1968)
    assert sol.carried_power_w == pytest.approx(sol.input_power_w, rel=1e-9)
    assert sol.power_w == sol.input_power_w
    plain = solve(WireAntennaSpec.model_validate(dict(DIPOLE, ground="free-space")), 7.1e6)
    assert plain.carried_power_w == pytest.approx(plain.input_power_w, rel=1e-9)
    assert plain.power_w == plain.input_power_w
    assert plain.power_scale(100.0) == math.sqrt(100.0 / plain.input_power_w)


def test_carried_power_is_the_real_part_quadratic_form():
    # Definition check on a small random system: 0.5 c^H Re(Z) c, with Re(Z) unsymmetric (linear algebra,
    # common practice; 1e-12: rounding).
    rng = np.random.default_rng(7)
    z = rng.normal(size=(6, 6)) + 1j * rng.normal(size=(6, 6)) * 1e4
    c = rng.normal(size=6) + 1j * rng.normal(size=6)
    assert carried_power_w(z, c) == pytest.approx(0.5 * float(np.real(np.conj(c) @ z.real @ c)), rel=1e-12)


def test_power_basis_rules():
    # The project's rule (the smaller positive estimate; common practice: never understate exposure),
    # POWER_BASIS_TOL as documented in rfsafe.antenna.wire.solver.
    assert power_basis_w(2.0, 1.0, field="f", freq_hz=1e6) == 1.0                 # smaller wins
    assert power_basis_w(1.0, 2.0, field="f", freq_hz=1e6) == 1.0
    assert power_basis_w(1.0, 1.0 - POWER_BASIS_TOL / 2, field="f", freq_hz=1e6) == 1.0   # rounding: terminal kept
    assert power_basis_w(-1e-12, 3.0, field="f", freq_hz=1e6) == 3.0              # a negative power is no power
    assert power_basis_w(3.0, -1e-12, field="f", freq_hz=1e6) == 3.0
    assert power_basis_w(math.nan, 3.0, field="f", freq_hz=1e6) == 3.0
    with pytest.raises(InputError, match=r"^wires: .*too small for the wavelength"):
        power_basis_w(-1.0, 0.0, field="wires", freq_hz=1e6)


@pytest.mark.parametrize("freq_mhz, radius_m", [(1.9, 0.02), (3.6, 0.0002), (14.1, 0.02)])
def test_choke_sweep_equals_a_new_solution_at_radius_steps(freq_mhz, radius_m):
    # Sherman-Morrison is exact for the currents (Sherman and Morrison 1950, from memory); the power each
    # choke value is scaled to must also be the one a fresh solve with that choke uses (the carried power
    # follows the choke's resistance). 1e-7: rounding of two dense solves near a resonance (common practice).
    base = solve(spec("perfect", shield_radius_m=radius_m), freq_mhz * 1e6)
    sweep = ChokeSweep(base, PLACES)
    for z in (30.0, 700j, -2500j, 400 + 900j, 1e5 + 0j):
        direct = solve(spec("perfect", shield_radius_m=radius_m,
                            choke={"resistance_ohm": z.real, "reactance_ohm": z.imag}), freq_mhz * 1e6)
        e_s, h_s = sweep.fields_rms(np.array([z]), 100.0)
        e_d, h_d = direct.fields_rms(PLACES, 100.0)
        np.testing.assert_allclose(e_s[0], e_d, rtol=1e-7)
        np.testing.assert_allclose(h_s[0], h_d, rtol=1e-7)


def test_choke_sweep_without_a_resolved_power_gives_infinite_fields_and_no_warning():
    # A choke value at which neither power estimate is positive is never judged to comply: its fields
    # are infinite (found by the fuzz campaign: the terminal power went negative for a scanned choke of a
    # mutated station and its square root raised a RuntimeWarning). Forced here on the swept quantities.
    sol = solve(spec("perfect"), 7.1e6)
    sweep = ChokeSweep(sol, PLACES)
    z = np.array([50.0, 500.0])
    e0, _ = sweep.fields_rms(z, 100.0)
    assert np.all(np.isfinite(e0))
    sweep._ia = -sweep._ia                 # terminal power negative for every choke value
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        e1, _ = sweep.fields_rms(z, 100.0)
        assert np.all(np.isfinite(e1))     # the carried power still resolves it
        sweep._paa, sweep._pbb, sweep._pab = -1.0, 0.0, 0j   # and now neither does
        e2, h2 = sweep.fields_rms(z, 100.0)
        assert np.all(np.isinf(e2)) and np.all(np.isinf(h2))
        assert math.isinf(sweep.max_common_mode_a_rms(50.0, 100.0))


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(freq_mhz=st.sampled_from([1.9, 3.6, 7.1, 10.1, 21.2]),
       radius_m=st.sampled_from([0.0002, 0.0007, 0.003, 0.01, 0.03]),
       joins=st.sampled_from(["start-side", "end-side"]),
       ground=st.sampled_from(["perfect", "free-space"]),
       reactance=st.floats(-5000.0, 5000.0),
       corner=st.tuples(st.floats(-8.0, 8.0), st.floats(-9.0, -2.0), st.floats(1.0, 6.0)))
def test_fields_per_watt_are_never_below_either_power_estimate(freq_mhz, radius_m, joins, ground, reactance,
                                                               corner):
    # Property (the first principle): for random shielded dipoles, routes and chokes, the field at every
    # place is at least what the terminal power gives and at least what the energy balance (radiated +
    # load power, computed independently) gives, to the balance's own accuracy (1e-5, energy conservation:
    # Harrington 1968, Sec. 4).
    route = [[0.0, 0.0, 4.0], [float(corner[0]), float(corner[1]), float(corner[2])]]
    sol = solve(spec(ground, shield_radius_m=radius_m, joins=joins, route=route,
                     choke={"resistance_ohm": 50.0, "reactance_ohm": reactance}), freq_mhz * 1e6)
    e, _ = sol.fields_rms(PLACES, 100.0)
    assert sol.power_w <= sol.input_power_w                 # never above the terminal power
    assert sol.power_w <= balance(sol) * (1 + 1e-5)          # nor above the energy balance
    e_terminal = e * math.sqrt(sol.power_w / sol.input_power_w)   # the fields had the terminal power been used
    assert np.all(e >= e_terminal)
