"""Impedance-matching networks (L, pi and T): part values, part voltage and current at a given power,
network loss from a declared inductor unloaded Q, and the loads a T tuner with given part ranges can match.

A network is a ladder of series and shunt reactances listed from the source (the side that sees the
target resistance) to the load. Capacitors are ideal (their loss is usually far below an inductor's,
common practice); each inductor of reactance X carries a series loss resistance X / Q_u.
Voltages and currents are phasor amplitudes (**peak** values of the RF sine at PEP); rms = peak/sqrt(2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rfsafe.errors import InputError, bad_value

__all__ = [
    "TOPOLOGIES", "POSITIONS", "DEFAULT_INDUCTOR_Q", "DEFAULT_PI_Q", "PI_Q_DEFINITION",
    "DEFAULT_T_Q", "T_Q_DEFINITION", "USUAL_CAPACITOR_PF", "USUAL_INDUCTOR_UH", "USUAL_RANGE_SOURCE",
    "TunerSpec", "MatchingPart", "MatchingNetwork", "TunerResult", "MatchableRegion",
    "l_network_ladders", "pi_network_ladder", "t_network_ladder", "t_network_from_settings",
    "t_matchable_region", "ladder_input_impedance", "analyse_ladder", "design_tuner",
]

TOPOLOGIES = ("l", "pi", "t")
POSITIONS = ("transmitter", "antenna")
#: Default inductor unloaded Q (common practice for air-wound tuner coils at HF: 100 or better).
DEFAULT_INDUCTOR_Q = 100.0
#: Default loaded Q of a pi network (common practice for transmitter output networks: about 10-12).
DEFAULT_PI_Q = 10.0
PI_Q_DEFINITION = ("loaded Q = sqrt(R_high / R_virtual - 1) = R_high / |X_shunt| at the higher-resistance "
                   "end (two back-to-back L sections through a virtual resistance R_virtual)")
#: Default loaded Q of a T network. Part voltages, currents and loss all grow with Q, so a Q above the
#: least that matches is the conservative assumption when the operator's settings are unknown.
DEFAULT_T_Q = 10.0
T_Q_DEFINITION = ("loaded Q = sqrt(R_virtual / R_low - 1) = |X| / R_low at the lower-resistance end, X the "
                  "series reactance on that side (the load's own included) "
                  "(two back-to-back L sections through a virtual resistance R_virtual above both end "
                  "resistances; the load end uses the load's series resistance)")
#: Usual ranges of tuner parts (common practice: air variable capacitors of HF tuners about 10-500 pF,
#: roller or tapped inductors about 0.1-30 uH). Values outside are flagged, not refused.
USUAL_CAPACITOR_PF = (10.0, 500.0)
USUAL_INDUCTOR_UH = (0.1, 30.0)
USUAL_RANGE_SOURCE = ("common practice: variable capacitors of HF tuners about 10-500 pF, roller/tapped "
                      "inductors about 0.1-30 uH")

_REL_TINY = 1e-12


@dataclass(frozen=True)
class TunerSpec:
    """A declared matching network.

    Attributes
    ----------
    topology : str
        ``"l"`` or ``"pi"``.
    position : str
        ``"transmitter"`` (the network matches the line input impedance, common case) or
        ``"antenna"`` (the network sits at the feedpoint and matches the antenna to the line).
    loaded_q : float or None
        Pi networks only; None means :data:`DEFAULT_PI_Q`. See :data:`PI_Q_DEFINITION`.
    inductor_q : float
        Unloaded Q of every inductor (default :data:`DEFAULT_INDUCTOR_Q`).
    target_resistance_ohm : float or None
        Resistance presented at the network input; None means 50 ohm at the transmitter end and the
        line's Z0 at the antenna end.
    capacitor_max_voltage_v_peak : float or None
        Declared peak-voltage rating of every capacitor [V].
    inductor_max_current_a_rms : float or None
        Declared rms-current rating of every inductor [A].
    l_form : str or None
        L network form to use (``"low-pass"``, ``"high-pass"``, ...); None picks low-pass if valid,
        else high-pass, else the valid form with the least loss.
    c1_pf, l_uh, c2_pf : float or None
        T networks only: the part settings (source-side capacitor, shunt inductor, load-side
        capacitor [pF, uH]). All three or none; given, the network is analysed as set (it may not
        match) instead of designed for a loaded Q.
    capacitor_range_pf, inductor_range_uh : tuple of float or None
        The tuner's part ranges (min, max) [pF], [uH]. Parts outside are flagged as not settable;
        without them the usual ranges (:data:`USUAL_CAPACITOR_PF`, :data:`USUAL_INDUCTOR_UH`,
        common practice) are used for a softer flag. T networks also use them for the matchable region.
    matchable_region : bool
        T networks: also compute :func:`t_matchable_region` for the part ranges.
    """

    topology: str
    position: str = "transmitter"
    loaded_q: float | None = None
    inductor_q: float = DEFAULT_INDUCTOR_Q
    target_resistance_ohm: float | None = None
    capacitor_max_voltage_v_peak: float | None = None
    inductor_max_current_a_rms: float | None = None
    l_form: str | None = None
    c1_pf: float | None = None
    l_uh: float | None = None
    c2_pf: float | None = None
    capacitor_range_pf: tuple[float, float] | None = None
    inductor_range_uh: tuple[float, float] | None = None
    matchable_region: bool = False


@dataclass(frozen=True)
class MatchingPart:
    """One part of a network with its stress at PEP."""

    name: str
    kind: str                 # "capacitor" | "inductor"
    placement: str            # "series" | "shunt, source side" | "shunt, load side"
    reactance_ohm: float
    value_pf: float | None
    value_uh: float | None
    voltage_v_peak: float
    voltage_v_rms: float
    current_a_peak: float
    current_a_rms: float
    loss_w: float
    rating: float | None      # capacitor: V peak; inductor: A rms
    rating_unit: str          # "V peak" | "A rms"
    headroom: float | None    # rating / stress
    exceeded: bool
    status: str = "not rated"  # "ok" | "EXCEEDED" | "not rated"
    range_flag: str = ""      # empty: within the declared (or usual) range of such parts


@dataclass(frozen=True)
class MatchingNetwork:
    """A designed network, analysed at one input power."""

    topology: str
    form: str
    freq_hz: float
    target_resistance_ohm: float
    load_ohm: complex
    loaded_q: float | None
    q_definition: str | None
    inductor_q: float
    parts: tuple[MatchingPart, ...]
    input_impedance_ideal_ohm: complex
    input_impedance_ohm: complex
    input_power_w: float
    output_power_w: float
    loss_w: float
    loss_db: float
    exceeded_parts: tuple[str, ...]
    range_flags: tuple[str, ...] = ()


@dataclass(frozen=True)
class MatchableRegion:
    """Loads a high-pass T network with given part ranges can match to a real target resistance.

    ``matchable[i][k]`` and ``least_q[i][k]`` refer to the load ``r_ohm[k] + j x_ohm[i]``;
    ``least_q`` is the loaded Q (:data:`T_Q_DEFINITION`) of the lowest-Q setting within the ranges
    (None where no setting matches).
    """

    freq_hz: float
    target_resistance_ohm: float
    capacitor_range_pf: tuple[float, float]
    inductor_range_uh: tuple[float, float]
    range_source: str
    r_ohm: tuple[float, ...]
    x_ohm: tuple[float, ...]
    matchable: tuple[tuple[bool, ...], ...]
    least_q: tuple[tuple[float | None, ...], ...]
    method: str


@dataclass(frozen=True)
class TunerResult:
    """The chosen network and every valid alternative (all L forms; the one pi or T network)."""

    position: str
    network: MatchingNetwork
    alternatives: tuple[MatchingNetwork, ...]
    method: str
    matchable_region: MatchableRegion | None = None


def _element_kind(placement: str, x: float) -> str:
    return "inductor" if x > 0 else "capacitor"


def _form_name(ladder) -> str:
    kinds = {p: _element_kind(p, x) for p, x in ladder}
    series = [k for p, k in kinds.items() if p == "series"]
    shunt = [k for p, k in kinds.items() if p != "series"]
    if not ladder:
        return "none (already matched)"
    if len(ladder) == 1:
        p, x = ladder[0]
        return f"single {'series' if p == 'series' else 'shunt'} {_element_kind(p, x)}"
    if series == ["inductor"] and shunt == ["capacitor"]:
        return "low-pass"
    if series == ["capacitor"] and shunt == ["inductor"]:
        return "high-pass"
    return f"series {series[0]}, shunt {shunt[0]}"


def l_network_ladders(load_ohm: complex, target_ohm: float, *, field: str = "tuner"):
    """Every valid lossless L section matching ``load_ohm`` to the real ``target_ohm``.

    Returns a list of ``(form, arrangement, ladder)`` where ``ladder`` lists ``(placement,
    reactance_ohm)`` from the source to the load (a shunt element's reactance is -1/B).

    Two arrangements: shunt element across the load (valid when \\|Z_L\\|^2 >= Z0 R_L) and series
    element next to the load (valid when R_L <= Z0); each gives up to two solutions.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., sec. 5.1, eq. (5.3a,b) (shunt element at the load) and
    eq. (5.6a,b) (series element at the load).
    """
    zl = complex(load_ohm)
    rl, xl = zl.real, zl.imag
    z0 = float(target_ohm)
    if not rl > 0:
        raise bad_value(f"{field}.load_ohm", zl, "must have a resistance > 0 ohm to be matched")
    out = []
    scale = max(abs(zl), z0)
    if abs(zl - z0) <= _REL_TINY * scale:
        return [("none (already matched)", "direct", [])]
    mag2 = rl * rl + xl * xl
    disc = rl * (rl - z0) + xl * xl  # = |Z_L|^2 - Z0 R_L, without cancellation when R_L ~ Z0
    if disc >= 0:  # shunt element across the load, series element toward the source
        root = math.sqrt(rl / z0) * math.sqrt(disc)
        for sign in (+1.0, -1.0):
            b = (xl + sign * root) / mag2
            ladder = []
            if abs(b) * scale > _REL_TINY:
                # (1/b)(1 - Z0/R_L) + X_L Z0/R_L: Pozar eq. (5.3b) grouped so that the two 1/b terms
                # cancel exactly when R_L = Z0 (nearly matched loads)
                x = (1.0 - z0 / rl) / b + xl * z0 / rl
                if abs(x) > _REL_TINY * scale:
                    ladder.append(("series", x))
                ladder.append(("shunt, load side", -1.0 / b))
            else:  # no shunt part needed: a series reactance cancels X_L (R_L == Z0)
                ladder.append(("series", -xl))
            out.append(("shunt element at the load", ladder))
    if rl <= z0:  # series element next to the load, shunt element at the source side
        for sign in (+1.0, -1.0):
            x = sign * math.sqrt(rl * (z0 - rl)) - xl
            b = sign * math.sqrt((z0 - rl) / rl) / z0
            ladder = []
            if abs(b) * scale > _REL_TINY:
                ladder.append(("shunt, source side", -1.0 / b))
            if abs(x) > _REL_TINY * scale:
                ladder.append(("series", x))
            out.append(("series element at the load", ladder))
    unique, seen = [], set()
    for arrangement, ladder in out:
        key = tuple((p, round(x / scale, 9)) for p, x in ladder)
        if key in seen:
            continue
        seen.add(key)
        unique.append((_form_name(ladder), arrangement, ladder))
    return unique


def pi_network_ladder(load_ohm: complex, target_ohm: float, loaded_q: float, *, field: str = "tuner"):
    """Low-pass pi network (shunt C, series L, shunt C) with a chosen loaded Q.

    The load is taken in parallel form G_L + j B_L; the load-side shunt element supplies
    Q2/R2 - B_L (it becomes an inductor if that is negative). Requires
    Q > sqrt(R_high / R_low - 1). See :data:`PI_Q_DEFINITION`.

    Returns ``(form, arrangement, ladder)`` as :func:`l_network_ladders`.

    References
    ----------
    Bowick, *RF Circuit Design*, 2nd ed., ch. 4, "The Pi network" (virtual-resistance design,
    R_v = R_H / (Q^2 + 1)); Pozar, *Microwave Engineering*, 4th ed., sec. 5.1 for each L half.
    """
    zl = complex(load_ohm)
    if not zl.real > 0:
        raise bad_value(f"{field}.load_ohm", zl, "must have a resistance > 0 ohm to be matched")
    yl = 1.0 / zl
    r1, r2 = float(target_ohm), 1.0 / yl.real
    rh, rlow = max(r1, r2), min(r1, r2)
    q_min = math.sqrt(rh / rlow - 1.0)
    if not (math.isfinite(loaded_q) and loaded_q > q_min):
        raise bad_value(f"{field}.loaded_q", loaded_q,
                        f"must be > {q_min:.4g}, the least loaded Q that matches {r2:.4g} ohm "
                        f"(parallel form of the load) to {r1:.4g} ohm")
    rv = rh / (1.0 + loaded_q**2)
    q1 = math.sqrt(r1 / rv - 1.0)
    q2 = math.sqrt(r2 / rv - 1.0)
    b1 = q1 / r1
    b2 = q2 / r2 - yl.imag
    ladder = [("shunt, source side", -1.0 / b1), ("series", rv * (q1 + q2))]
    if abs(b2) * r2 > _REL_TINY:
        ladder.append(("shunt, load side", -1.0 / b2))
    return ("low-pass" if b2 > 0 else "low-pass, load-side shunt inductor"), "pi", ladder


def t_least_q(load_ohm: complex, target_ohm: float) -> float:
    r"""Least loaded Q (:data:`T_Q_DEFINITION`) above which a high-pass T matches ``load_ohm`` [ohm].

    Two bounds: the virtual resistance must exceed both end resistances, and the load-side series
    capacitor must also cancel any inductive part of the load (X_C2 = -(Q2 R_L + X_L) < 0 needs
    R_virtual > \|Z_L\|^2 / R_L).
    """
    zl = complex(load_ohm)
    r1, rl = float(target_ohm), zl.real
    r_low = min(r1, rl)
    return math.sqrt(max(r1, abs(zl) ** 2 / rl) / r_low - 1.0)


def t_network_ladder(load_ohm: complex, target_ohm: float, loaded_q: float, *, field: str = "tuner"):
    r"""High-pass T network (series C, shunt L, series C) matching ``load_ohm`` to ``target_ohm`` [ohm].

    Two L sections back to back through a virtual resistance R_v = R_low (Q^2 + 1) above both end
    resistances (see :data:`T_Q_DEFINITION`), with Q1 = sqrt(R_v/R_1 - 1), Q2 = sqrt(R_v/R_L - 1):

    .. math:: X_{C1} = -Q_1 R_1, \quad X_{C2} = -Q_2 R_L - X_L, \quad X_{L} = R_v / (Q_1 + Q_2)

    (each series section R + jX turned into its parallel form R_v in parallel with -R_v/Q; the
    shunt inductor resonates out both parallel reactances). Requires Q > :func:`t_least_q`.

    Returns ``(form, arrangement, ladder)`` as :func:`l_network_ladders`.

    References
    ----------
    Bowick, *RF Circuit Design*, 2nd ed., ch. 4, "The T network" (virtual-resistance design,
    R_v = R_small (Q^2 + 1)); Pozar, *Microwave Engineering*, 4th ed., sec. 5.1 for each L half.
    """
    zl = complex(load_ohm)
    if not zl.real > 0:
        raise bad_value(f"{field}.load_ohm", zl, "must have a resistance > 0 ohm to be matched")
    r1, rl, xl = float(target_ohm), zl.real, zl.imag
    q_min = t_least_q(zl, r1)
    if not (math.isfinite(loaded_q) and loaded_q > q_min):
        raise bad_value(f"{field}.loaded_q", loaded_q,
                        f"must be > {q_min:.4g}, the least loaded Q at which a high-pass T (series C, shunt L, "
                        f"series C) matches {rl:.4g}{xl:+.4g}j ohm to {r1:.4g} ohm")
    rv = min(r1, rl) * (1.0 + loaded_q ** 2)
    q1 = math.sqrt(rv / r1 - 1.0)
    q2 = math.sqrt(rv / rl - 1.0)
    ladder = [("series, source side", -q1 * r1), ("shunt", rv / (q1 + q2)), ("series, load side", -q2 * rl - xl)]
    return "high-pass", "t", ladder


def _check_setting(field: str, value, unit: str) -> float:
    if not (isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value) and value > 0):
        raise bad_value(field, value, f"must be a number > 0 {unit}")
    return float(value)


def t_network_from_settings(c1_pf: float, l_uh: float, c2_pf: float, freq_hz: float, *, field: str = "tuner"):
    """The ladder of a high-pass T set to the given part values [pF, uH] at ``freq_hz`` [Hz]."""
    omega = 2.0 * math.pi * freq_hz
    c1 = _check_setting(f"{field}.c1_pf", c1_pf, "pF")
    lu = _check_setting(f"{field}.l_uh", l_uh, "uH")
    c2 = _check_setting(f"{field}.c2_pf", c2_pf, "pF")
    return "high-pass, as set", "t", [("series, source side", -1e12 / (omega * c1)), ("shunt", omega * lu * 1e-6),
                                       ("series, load side", -1e12 / (omega * c2))]


def _t_settings_for_c2(load_ohm, target_ohm: float, x2_ohm):
    r"""T part reactances that match ``load_ohm`` for a given load-side capacitor reactance ``x2_ohm``.

    Vectorised over broadcast arrays. With the load-side branch Z_a = R_L + j(X_L + X_2) in parallel
    form R_pa = \|Z_a\|^2 / R_L, a match exists when R_pa >= R_1; then (one branch gives a
    series capacitor at the source side):
    X_1 = -sqrt(R_1 (R_pa - R_1)), B_shunt = -sqrt(R_pa/R_1 - 1)/R_pa + (X_L + X_2)/\|Z_a\|^2,
    and the shunt part is an inductor when B_shunt < 0. Returns (X_1, X_shunt, R_pa, valid).
    """
    zl = np.asarray(load_ohm, dtype=complex)
    rl, xl = zl.real, zl.imag
    x_a = xl + np.asarray(x2_ohm, dtype=float)
    mag2 = rl * rl + x_a * x_a
    r_pa = mag2 / rl
    ok = r_pa >= target_ohm
    with np.errstate(invalid="ignore", divide="ignore"):
        x1 = -np.sqrt(np.where(ok, target_ohm * (r_pa - target_ohm), np.nan))
        b_sh = -np.sqrt(np.where(ok, r_pa / target_ohm - 1.0, np.nan)) / r_pa + x_a / mag2
        x_sh = -1.0 / b_sh
    valid = ok & (b_sh < 0) & (x1 < 0)
    return x1, x_sh, r_pa, valid


def t_matchable_region(freq_hz: float, capacitor_range_pf: tuple[float, float],
                       inductor_range_uh: tuple[float, float], *, target_ohm: float = 50.0,
                       r_ohm=None, x_ohm=None, samples: int = 1201, range_source: str = "declared",
                       field: str = "tuner") -> MatchableRegion:
    """Which loads a high-pass T with both capacitors in ``capacitor_range_pf`` and the inductor in
    ``inductor_range_uh`` can match to ``target_ohm`` [ohm] at ``freq_hz`` [Hz].

    For every load on the grid, the load-side capacitor is stepped through ``samples`` settings
    (log-spaced over its range); for each, the other two parts follow in closed form
    (:func:`_t_settings_for_c2`) and the load counts as matchable if both lie within their ranges.
    A load within one step of the region's edge may be misclassified (said in ``method``).

    Parameters
    ----------
    r_ohm, x_ohm : array_like, optional
        Grid of load resistances and reactances [ohm]; default 48 resistances log-spaced 1-10 000 ohm
        and 25 reactances from -3000 to +3000 ohm (denser near 0).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., sec. 5.1 (each L half in closed form).
    """
    cmin, cmax = _range(f"{field}.capacitor_range_pf", capacitor_range_pf, "pF")
    lmin, lmax = _range(f"{field}.inductor_range_uh", inductor_range_uh, "uH")
    omega = 2.0 * math.pi * _check_setting(f"{field}.freq_hz", freq_hz, "Hz")
    r = np.geomspace(1.0, 1e4, 48) if r_ohm is None else np.asarray(r_ohm, dtype=float)
    x = 20.0 * np.sinh(np.linspace(-math.asinh(150.0), math.asinh(150.0), 25)) if x_ohm is None \
        else np.asarray(x_ohm, dtype=float)
    if not (r.ndim == 1 and x.ndim == 1 and r.size and x.size and np.all(np.isfinite(r)) and np.all(r > 0)
            and np.all(np.isfinite(x))):
        raise bad_value(f"{field}.r_ohm", r.tolist(), "must be finite resistances > 0 ohm with finite reactances")
    c2 = np.geomspace(cmin, cmax, samples) * 1e-12
    x2 = -1.0 / (omega * c2)
    tol = 1e-9  # the ends of a range count as inside (rounding of the pF/uH conversion)
    q_best = np.full((x.size, r.size), np.inf)
    ok = np.zeros((x.size, r.size), dtype=bool)
    for i, xv in enumerate(x):  # one reactance row at a time: memory stays at (resistances x samples)
        zl = r[:, None] + 1j * xv
        x1, x_sh, r_pa, valid = _t_settings_for_c2(zl, float(target_ohm), x2[None, :])
        with np.errstate(divide="ignore", invalid="ignore"):
            c1_pf = 1e12 / (omega * -x1)
            l_uh = 1e6 * x_sh / omega
        inside = (valid & (c1_pf >= cmin * (1 - tol)) & (c1_pf <= cmax * (1 + tol))
                  & (l_uh >= lmin * (1 - tol)) & (l_uh <= lmax * (1 + tol)))
        r_low = np.minimum(float(target_ohm), zl.real)
        with np.errstate(invalid="ignore"):
            q = np.where(inside, np.sqrt(np.maximum(r_pa / r_low - 1.0, 0.0)), np.inf)
        q_best[i] = q.min(axis=1)
        ok[i] = inside.any(axis=1)
    return MatchableRegion(
        freq_hz=float(freq_hz), target_resistance_ohm=float(target_ohm), capacitor_range_pf=(cmin, cmax),
        inductor_range_uh=(lmin, lmax), range_source=range_source, r_ohm=tuple(float(v) for v in r),
        x_ohm=tuple(float(v) for v in x), matchable=tuple(tuple(bool(b) for b in row) for row in ok),
        least_q=tuple(tuple(float(qq) if b else None for qq, b in zip(qrow, brow)) for qrow, brow in zip(q_best, ok)),
        method=(f"high-pass T, load-side capacitor stepped through {samples} log-spaced settings, the other two "
                "parts in closed form (Pozar sec. 5.1); a load within one step of the edge may be misclassified"))


def _range(field: str, value, unit: str) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise bad_value(field, value, f"must be two numbers (min, max) [{unit}]") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise bad_value(field, list(value), f"must be two numbers 0 < min < max [{unit}]")
    return lo, hi


def _element_impedance(x: float, inductor_q: float) -> complex:
    if x > 0 and math.isfinite(inductor_q):
        return complex(x / inductor_q, x)
    return complex(0.0, x)


def ladder_input_impedance(ladder, load_ohm: complex, *, inductor_q: float = math.inf) -> complex:
    """Input impedance [ohm] of a ladder (source to load) terminated in ``load_ohm``."""
    return _walk(ladder, complex(load_ohm), inductor_q)[0]


def _walk(ladder, zl: complex, inductor_q: float):
    """From the load toward the source with unit load current: (Z_in, V_in, I_in, per-element V, I)."""
    v, i = zl, 1.0 + 0.0j
    elem = [None] * len(ladder)
    for k in range(len(ladder) - 1, -1, -1):
        placement, x = ladder[k]
        z = _element_impedance(x, inductor_q)
        if placement.startswith("series"):
            elem[k] = (i * z, i)
            v = v + i * z
        else:
            ie = v / z
            elem[k] = (v, ie)
            i = i + ie
    return v / i, v, i, elem


def analyse_ladder(form: str, ladder, *, topology: str, load_ohm: complex, target_ohm: float,
                   freq_hz: float, input_power_w: float, inductor_q: float = DEFAULT_INDUCTOR_Q,
                   loaded_q: float | None = None, capacitor_max_voltage_v_peak: float | None = None,
                   inductor_max_current_a_rms: float | None = None,
                   capacitor_range_pf: tuple[float, float] | None = None,
                   inductor_range_uh: tuple[float, float] | None = None) -> MatchingNetwork:
    """Part values and stresses of a ladder at ``input_power_w`` [W] net into its input.

    The lossy network (inductor Q) is analysed exactly: its actual input impedance is reported, and
    voltages and currents are scaled so that the net input power is ``input_power_w``. Part values
    outside ``capacitor_range_pf`` / ``inductor_range_uh`` (the tuner's declared ranges) are flagged
    as not settable; without declared ranges, values outside the usual ranges
    (:data:`USUAL_RANGE_SOURCE`) are flagged as beyond a usual tuner.
    """
    zl = complex(load_ohm)
    omega = 2.0 * math.pi * freq_hz
    z_ideal = _walk(ladder, zl, math.inf)[0]
    z_in, v_in, i_in, elem = _walk(ladder, zl, inductor_q)
    p_unit = 0.5 * float(np.real(v_in * np.conj(i_in)))
    s = math.sqrt(input_power_w / p_unit)
    p_out = 0.5 * zl.real * s * s
    parts = []
    counts = {"capacitor": 0, "inductor": 0}
    for (placement, x), (ve, ie) in zip(ladder, elem):
        kind = _element_kind(placement, x)
        counts[kind] += 1
        name = ("C" if kind == "capacitor" else "L") + str(counts[kind])
        vpk, ipk = abs(ve) * s, abs(ie) * s
        loss = 0.5 * ipk * ipk * (x / inductor_q if kind == "inductor" and math.isfinite(inductor_q) else 0.0)
        if kind == "capacitor":
            rating, unit, stress = capacitor_max_voltage_v_peak, "V peak", vpk
        else:
            rating, unit, stress = inductor_max_current_a_rms, "A rms", ipk / math.sqrt(2.0)
        headroom = None if rating is None else (math.inf if stress == 0 else rating / stress)
        value = (1e12 / (omega * -x)) if kind == "capacitor" else (1e6 * x / omega)
        exceeded = rating is not None and stress > rating
        parts.append(MatchingPart(
            name=name, kind=kind, placement=placement, reactance_ohm=float(x),
            value_pf=value if kind == "capacitor" else None,
            value_uh=value if kind == "inductor" else None,
            voltage_v_peak=vpk, voltage_v_rms=vpk / math.sqrt(2.0),
            current_a_peak=ipk, current_a_rms=ipk / math.sqrt(2.0), loss_w=loss,
            rating=rating, rating_unit=unit, headroom=headroom, exceeded=exceeded,
            status="not rated" if rating is None else ("EXCEEDED" if exceeded else "ok"),
            range_flag=_range_flag(name, kind, value, capacitor_range_pf if kind == "capacitor"
                                   else inductor_range_uh)))
    return MatchingNetwork(
        topology=topology, form=form, freq_hz=float(freq_hz), target_resistance_ohm=float(target_ohm),
        load_ohm=zl, loaded_q=loaded_q, q_definition=PI_Q_DEFINITION if topology == "pi" else None,
        inductor_q=float(inductor_q), parts=tuple(parts), input_impedance_ideal_ohm=complex(z_ideal),
        input_impedance_ohm=complex(z_in), input_power_w=float(input_power_w), output_power_w=p_out,
        loss_w=float(input_power_w) - p_out, loss_db=10.0 * math.log10(float(input_power_w) / p_out),
        exceeded_parts=tuple(p.name for p in parts if p.exceeded),
        range_flags=tuple(p.range_flag for p in parts if p.range_flag))


def _range_flag(name: str, kind: str, value: float, declared: tuple[float, float] | None) -> str:
    """Empty if ``value`` [pF or uH] lies in the declared range (or, without one, the usual range)."""
    unit = "pF" if kind == "capacitor" else "uH"
    lo, hi = declared if declared is not None else (USUAL_CAPACITOR_PF if kind == "capacitor" else USUAL_INDUCTOR_UH)
    if lo <= value <= hi:
        return ""
    side = "above" if value > hi else "below"
    if declared is not None:
        return (f"{name} = {value:.4g} {unit} is {side} this tuner's declared range {lo:g}-{hi:g} {unit}: "
                "the tuner cannot be set to it")
    what = "variable capacitors" if kind == "capacitor" else "roller/tapped inductors"
    return (f"{name} = {value:.4g} {unit} is {side} the usual {lo:g}-{hi:g} {unit} of tuner {what} "
            "(common practice): beyond a usual tuner")


def _check_spec(spec: TunerSpec, field: str) -> None:
    if spec.topology not in TOPOLOGIES:
        raise bad_value(f"{field}.topology", spec.topology, 'is not a known network (known: "l", "pi", "t")')
    if spec.position not in POSITIONS:
        raise bad_value(f"{field}.position", spec.position,
                        'is not a known position (known: "transmitter", "antenna")')
    if not (spec.inductor_q > 0):
        raise bad_value(f"{field}.inductor_q", spec.inductor_q, "must be > 0 (use inf for ideal parts)")
    for name in ("capacitor_max_voltage_v_peak", "inductor_max_current_a_rms", "target_resistance_ohm"):
        val = getattr(spec, name)
        if val is not None and not (math.isfinite(val) and val > 0):
            raise bad_value(f"{field}.{name}", val, "must be a number > 0")
    if spec.loaded_q is not None and spec.topology == "l":
        raise bad_value(f"{field}.loaded_q", spec.loaded_q, "applies to pi and T networks only")
    settings = {"c1_pf": spec.c1_pf, "l_uh": spec.l_uh, "c2_pf": spec.c2_pf}
    given = [k for k, v in settings.items() if v is not None]
    if given and spec.topology != "t":
        raise bad_value(f"{field}.{given[0]}", settings[given[0]], "applies to T networks only")
    if given and len(given) != 3:
        missing = next(k for k in settings if k not in given)
        raise InputError(f"{field}.{missing}: is required but missing (give all three T settings c1_pf, l_uh, "
                         "c2_pf, or none)")
    if given and spec.loaded_q is not None:
        raise bad_value(f"{field}.loaded_q", spec.loaded_q, "cannot be combined with part settings (c1_pf, l_uh, c2_pf)")
    if spec.capacitor_range_pf is not None:
        _range(f"{field}.capacitor_range_pf", spec.capacitor_range_pf, "pF")
    if spec.inductor_range_uh is not None:
        _range(f"{field}.inductor_range_uh", spec.inductor_range_uh, "uH")
    if spec.matchable_region and spec.topology != "t":
        raise bad_value(f"{field}.matchable_region", True, "applies to T networks only")


def design_tuner(spec: TunerSpec, *, load_ohm: complex, freq_hz: float, input_power_w: float,
                 target_ohm: float, field: str = "tuner") -> TunerResult:
    """Design the declared network for ``load_ohm`` and analyse it at ``input_power_w`` [W].

    Parameters
    ----------
    spec : TunerSpec
        The declared network.
    load_ohm : complex
        Impedance the network must match [ohm] (line input impedance for a transmitter-end network,
        antenna impedance for a feedpoint network).
    freq_hz : float
        Frequency [Hz].
    input_power_w : float
        Net power into the network [W] (PEP for peak stresses).
    target_ohm : float
        Resistance to present at the input [ohm] (``spec.target_resistance_ohm`` overrides it).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., sec. 5.1 (L sections); Bowick, *RF Circuit Design*,
    2nd ed., ch. 4 (pi and T networks, loaded Q).
    """
    _check_spec(spec, field)
    target = spec.target_resistance_ohm if spec.target_resistance_ohm is not None else target_ohm
    common = dict(load_ohm=load_ohm, target_ohm=target, freq_hz=freq_hz, input_power_w=input_power_w,
                  inductor_q=spec.inductor_q, capacitor_max_voltage_v_peak=spec.capacitor_max_voltage_v_peak,
                  inductor_max_current_a_rms=spec.inductor_max_current_a_rms,
                  capacitor_range_pf=spec.capacitor_range_pf, inductor_range_uh=spec.inductor_range_uh)
    if spec.topology == "t":
        return _design_t(spec, common, field)
    if spec.topology == "pi":
        q = DEFAULT_PI_Q if spec.loaded_q is None else float(spec.loaded_q)
        form, _, ladder = pi_network_ladder(load_ohm, target, q, field=field)
        net = analyse_ladder(form, ladder, topology="pi", loaded_q=q, **common)
        return TunerResult(spec.position, net, (net,),
                           "pi network by virtual resistance (Bowick ch. 4); " + PI_Q_DEFINITION)
    nets = [analyse_ladder(form, ladder, topology="l", **common)
            for form, _, ladder in l_network_ladders(load_ohm, target, field=field)]
    if spec.l_form is not None:
        chosen = [n for n in nets if n.form == spec.l_form]
        if not chosen:
            raise bad_value(f"{field}.l_form", spec.l_form, "is not a valid L form for this load (valid: "
                            + ", ".join(f'"{n.form}"' for n in nets) + ")")
        pick = chosen[0]
    else:
        def rank(n):
            order = {"low-pass": 0, "high-pass": 1}.get(n.form, 2)
            return (order, n.loss_w)
        pick = min(nets, key=rank)
    return TunerResult(spec.position, pick, tuple(nets),
                       "L section, every valid form (Pozar sec. 5.1); low-pass preferred, then high-pass, "
                       "then least loss")


def _design_t(spec: TunerSpec, common: dict, field: str) -> TunerResult:
    load, target, freq = complex(common["load_ohm"]), float(common["target_ohm"]), float(common["freq_hz"])
    if not load.real > 0:
        raise bad_value(f"{field}.load_ohm", load, "must have a resistance > 0 ohm to be matched")
    region = None
    if spec.matchable_region:
        declared = spec.capacitor_range_pf is not None and spec.inductor_range_uh is not None
        region = t_matchable_region(
            freq, spec.capacitor_range_pf or USUAL_CAPACITOR_PF, spec.inductor_range_uh or USUAL_INDUCTOR_UH,
            target_ohm=target, field=field,
            range_source="declared" if declared else "usual ranges where none declared (" + USUAL_RANGE_SOURCE + ")")
    if spec.c1_pf is not None:
        form, _, ladder = t_network_from_settings(spec.c1_pf, spec.l_uh, spec.c2_pf, freq, field=field)
        # the loaded Q these settings give: the parallel-form resistance at the shunt node
        x_a = load.imag + ladder[2][1]
        r_pa = (load.real ** 2 + x_a ** 2) / load.real
        q = math.sqrt(max(r_pa / min(target, load.real) - 1.0, 0.0))
        net = analyse_ladder(form, ladder, topology="t", loaded_q=q, **common)
        net = _with_q_definition(net)
        return TunerResult(spec.position, net, (net,),
                           "T network analysed as set (series C, shunt L, series C); it matches only if the "
                           "input impedance shown equals the target; net input power taken as given "
                           "(conservative for part stress)", region)
    q_least = t_least_q(load, target)
    if spec.loaded_q is not None:
        q, q_note = float(spec.loaded_q), "loaded Q as declared"
    else:
        q = max(DEFAULT_T_Q, 1.2 * q_least)
        q_note = (f"loaded Q {q:.3g} by default (the larger of {DEFAULT_T_Q:g} and 1.2 x the least Q "
                  f"{q_least:.3g} that matches; stresses grow with Q, so a high assumption is conservative)")
    form, _, ladder = t_network_ladder(load, target, q, field=field)
    net = _with_q_definition(analyse_ladder(form, ladder, topology="t", loaded_q=q, **common))
    return TunerResult(spec.position, net, (net,),
                       "high-pass T network (series C, shunt L, series C) by virtual resistance (Bowick ch. 4); "
                       + T_Q_DEFINITION + "; " + q_note, region)


def _with_q_definition(net: MatchingNetwork) -> MatchingNetwork:
    import dataclasses
    return dataclasses.replace(net, q_definition=T_Q_DEFINITION)
