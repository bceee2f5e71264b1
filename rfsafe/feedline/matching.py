"""Impedance-matching networks (L and pi): part values, part voltage and current at a given power,
and network loss from a declared inductor unloaded Q.

A network is a ladder of series and shunt reactances listed from the source (the side that sees the
target resistance) to the load. Capacitors are ideal (their loss is usually far below an inductor's,
common practice); each inductor of reactance X carries a series loss resistance X / Q_u.
Voltages and currents are phasor amplitudes (**peak** values of the RF sine at PEP); rms = peak/sqrt(2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rfsafe.errors import bad_value

__all__ = [
    "TOPOLOGIES", "POSITIONS", "DEFAULT_INDUCTOR_Q", "DEFAULT_PI_Q", "PI_Q_DEFINITION",
    "TunerSpec", "MatchingPart", "MatchingNetwork", "TunerResult",
    "l_network_ladders", "pi_network_ladder", "ladder_input_impedance", "analyse_ladder", "design_tuner",
]

TOPOLOGIES = ("l", "pi")
POSITIONS = ("transmitter", "antenna")
#: Default inductor unloaded Q (common practice for air-wound tuner coils at HF: 100 or better).
DEFAULT_INDUCTOR_Q = 100.0
#: Default loaded Q of a pi network (common practice for transmitter output networks: about 10-12).
DEFAULT_PI_Q = 10.0
PI_Q_DEFINITION = ("loaded Q = sqrt(R_high / R_virtual - 1) = R_high / |X_shunt| at the higher-resistance "
                   "end (two back-to-back L sections through a virtual resistance R_virtual)")

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
    """

    topology: str
    position: str = "transmitter"
    loaded_q: float | None = None
    inductor_q: float = DEFAULT_INDUCTOR_Q
    target_resistance_ohm: float | None = None
    capacitor_max_voltage_v_peak: float | None = None
    inductor_max_current_a_rms: float | None = None
    l_form: str | None = None


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


@dataclass(frozen=True)
class TunerResult:
    """The chosen network and every valid alternative (all L forms; the one pi network)."""

    position: str
    network: MatchingNetwork
    alternatives: tuple[MatchingNetwork, ...]
    method: str


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
        if placement == "series":
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
                   inductor_max_current_a_rms: float | None = None) -> MatchingNetwork:
    """Part values and stresses of a ladder at ``input_power_w`` [W] net into its input.

    The lossy network (inductor Q) is analysed exactly: its actual input impedance is reported, and
    voltages and currents are scaled so that the net input power is ``input_power_w``.
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
        parts.append(MatchingPart(
            name=name, kind=kind, placement=placement, reactance_ohm=float(x),
            value_pf=(1e12 / (omega * -x)) if kind == "capacitor" else None,
            value_uh=(1e6 * x / omega) if kind == "inductor" else None,
            voltage_v_peak=vpk, voltage_v_rms=vpk / math.sqrt(2.0),
            current_a_peak=ipk, current_a_rms=ipk / math.sqrt(2.0), loss_w=loss,
            rating=rating, rating_unit=unit, headroom=headroom,
            exceeded=rating is not None and stress > rating))
    return MatchingNetwork(
        topology=topology, form=form, freq_hz=float(freq_hz), target_resistance_ohm=float(target_ohm),
        load_ohm=zl, loaded_q=loaded_q, q_definition=PI_Q_DEFINITION if topology == "pi" else None,
        inductor_q=float(inductor_q), parts=tuple(parts), input_impedance_ideal_ohm=complex(z_ideal),
        input_impedance_ohm=complex(z_in), input_power_w=float(input_power_w), output_power_w=p_out,
        loss_w=float(input_power_w) - p_out, loss_db=10.0 * math.log10(float(input_power_w) / p_out),
        exceeded_parts=tuple(p.name for p in parts if p.exceeded))


def _check_spec(spec: TunerSpec, field: str) -> None:
    if spec.topology not in TOPOLOGIES:
        raise bad_value(f"{field}.topology", spec.topology, 'is not a known network (known: "l", "pi")')
    if spec.position not in POSITIONS:
        raise bad_value(f"{field}.position", spec.position,
                        'is not a known position (known: "transmitter", "antenna")')
    if not (spec.inductor_q > 0):
        raise bad_value(f"{field}.inductor_q", spec.inductor_q, "must be > 0 (use inf for ideal parts)")
    for name in ("capacitor_max_voltage_v_peak", "inductor_max_current_a_rms", "target_resistance_ohm"):
        val = getattr(spec, name)
        if val is not None and not (math.isfinite(val) and val > 0):
            raise bad_value(f"{field}.{name}", val, "must be a number > 0")
    if spec.loaded_q is not None and spec.topology != "pi":
        raise bad_value(f"{field}.loaded_q", spec.loaded_q, "applies to pi networks only")


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
    2nd ed., ch. 4 (pi network, loaded Q).
    """
    _check_spec(spec, field)
    target = spec.target_resistance_ohm if spec.target_resistance_ohm is not None else target_ohm
    common = dict(load_ohm=load_ohm, target_ohm=target, freq_hz=freq_hz, input_power_w=input_power_w,
                  inductor_q=spec.inductor_q, capacitor_max_voltage_v_peak=spec.capacitor_max_voltage_v_peak,
                  inductor_max_current_a_rms=spec.inductor_max_current_a_rms)
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
