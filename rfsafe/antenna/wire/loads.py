"""Impedance of lumped circuits in series with a wire (traps, loading coils, resistors, chokes).

A lumped load of impedance Z_L at a node of a wire is a gap across which the voltage -Z_L I appears;
moved to the left-hand side of the moment-method system it adds Z_L g^T g to the impedance matrix,
where g is the gap's coupling row (the same construction as a delta-gap feed; see ``solver``).

References
----------
R. F. Harrington, Field Computation by Moment Methods, Macmillan, 1968, Sec. 4.5 (loaded wires: the
load impedance enters the impedance matrix at the loaded point).
C. A. Balanis, Antenna Theory: Analysis and Design, 3rd ed., Wiley, 2005, Sec. 8.4 (delta-gap source
at a node of the moment-method model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rfsafe.errors import bad_value

__all__ = ["circuit_impedance_ohm", "LoadedGeometry", "loaded_geometry", "load_impedances_ohm", "LoadStress",
           "load_stress"]


def circuit_impedance_ohm(c, freq_hz: float, *, field: str = "load") -> complex:
    """Impedance [ohm] of a lumped circuit (``model.CircuitSpec``) at ``freq_hz`` [Hz].

    Series: Z = R + jX + omega L / Q + j omega L + 1 / (j omega C).
    Parallel: 1 / Z = 1 / R + 1 / (omega L / Q + j omega L) + j omega C.
    The coil's Q is its unloaded Q at the frequency (loss as a series resistance omega L / Q).

    Parameters
    ----------
    c : CircuitSpec
        Circuit elements (``resistance_ohm``, ``reactance_ohm``, ``inductance_uh``, ``capacitance_pf``,
        ``coil_q``) and ``circuit`` ("series" or "parallel").
    freq_hz : float
        Frequency [Hz].
    field : str
        Field path for messages.

    Raises
    ------
    InputError
        A lossless parallel L-C exactly at resonance (infinite impedance).

    References
    ----------
    Textbook circuit theory (series and parallel R-L-C; coil Q = omega L / R), common practice.
    """
    w = 2.0 * math.pi * freq_hz
    z_coil = None
    if c.inductance_uh is not None:
        x_l = w * c.inductance_uh * 1e-6
        z_coil = complex(x_l / c.coil_q if c.coil_q else 0.0, x_l)
    if c.circuit == "series":
        z = complex(c.resistance_ohm or 0.0, c.reactance_ohm or 0.0)
        if z_coil is not None:
            z += z_coil
        if c.capacitance_pf is not None:
            z += 1.0 / (1j * w * c.capacitance_pf * 1e-12)
        return z
    y = 0j
    if c.resistance_ohm is not None:
        y += 1.0 / c.resistance_ohm
    if z_coil is not None:
        y += 1.0 / z_coil
    if c.capacitance_pf is not None:
        y += 1j * w * c.capacitance_pf * 1e-12
    if abs(y) == 0.0 or abs(y) < 1e-15 * (abs(1.0 / z_coil) if z_coil else 1.0):
        raise bad_value(f"{field}.capacitance_pf", c.capacitance_pf,
                        f"makes a lossless trap exactly resonant at {freq_hz / 1e6:g} MHz (infinite impedance): "
                        "give coil_q or resistance_ohm (its loss)")
    return 1.0 / y


@dataclass(frozen=True)
class LoadedGeometry:
    """The geometry the solver segments: the wires plus the shield (if any), and its lumped loads."""

    spec: object                          # WireAntennaSpec (shield expanded into wires and a choke load)
    feed_wires: tuple[int, ...]
    load_places: tuple[tuple[int, float], ...]   # (wire index, fraction from its first point) per load
    load_labels: tuple[str, ...]
    load_fields: tuple[str, ...]
    wire_fields: tuple[str, ...] | None
    shield: object = None                 # shield.ExpandedShield or None


def loaded_geometry(spec, feed_wires: tuple[int, ...], *, prefix: str = "") -> LoadedGeometry:
    """Expand the feedline shield (if declared) and place the loads of a checked wire spec."""
    from rfsafe.antenna.wire.model import load_label, load_places

    if getattr(spec, "shield", None) is None:
        return LoadedGeometry(spec=spec, feed_wires=feed_wires, load_places=load_places(spec, prefix=prefix),
                              load_labels=tuple(load_label(spec, n) for n in range(len(spec.loads))),
                              load_fields=tuple(f"{prefix}loads[{n}]" for n in range(len(spec.loads))),
                              wire_fields=None)
    from rfsafe.antenna.wire.shield import expand_shield

    ex = expand_shield(spec, feed_wires, prefix=prefix)
    return LoadedGeometry(spec=ex.spec, feed_wires=ex.feed_wires, load_places=load_places(ex.spec, prefix=prefix),
                          load_labels=tuple(load_label(ex.spec, n) for n in range(len(ex.spec.loads))),
                          load_fields=ex.load_fields, wire_fields=ex.wire_fields, shield=ex)


def load_impedances_ohm(geo: LoadedGeometry, freq_hz: float) -> np.ndarray:
    """Impedance [ohm] of every load of ``geo`` at ``freq_hz`` [Hz], shape (Nl,)."""
    return np.array([circuit_impedance_ohm(c, freq_hz, field=f) for c, f in zip(geo.spec.loads, geo.load_fields)],
                    dtype=complex)


@dataclass(frozen=True)
class LoadStress:
    """One lumped load at a stated power delivered to the antenna."""

    label: str
    position_m: tuple[float, float, float]
    impedance_ohm: complex
    current_a_rms: float
    voltage_v_peak: float             # across the load
    dissipated_w: float
    voltage_rating_v_peak: float | None   # None: not rated
    voltage_headroom: float | None        # rating / voltage (None: not rated)


def load_stress(sol, input_power_w: float) -> tuple[LoadStress, ...]:
    """Current through, voltage across and power in each load for ``input_power_w`` [W] delivered.

    The power is the continuous-carrier power of the envelope peak when ``input_power_w`` is the PEP
    at the antenna, so the voltage is the peak voltage the load must withstand (no duty factor).
    """
    scale = sol.power_scale(input_power_w)
    out = []
    slot = sol.shield.choke_load if sol.shield is not None and not sol.shield.choke_declared else None
    for n, label in enumerate(sol.load_labels):
        if n == slot:   # the 0-ohm place kept for choke sweeps, not a declared load
            continue
        i = sol.load_current_a[n] * scale
        z = sol.load_impedance_ohm[n]
        v = abs(z * i)
        spec_load = sol.geometry_spec.loads[n]
        rating = getattr(spec_load, "voltage_rating_v_peak", None)
        out.append(LoadStress(label=label, position_m=tuple(float(x) for x in sol.structure.load_position_m[n]),
                              impedance_ohm=complex(z), current_a_rms=abs(i) / math.sqrt(2), voltage_v_peak=v,
                              dissipated_w=0.5 * abs(i) ** 2 * z.real, voltage_rating_v_peak=rating,
                              voltage_headroom=(rating / v if v > 0 else math.inf) if rating else None))
    return tuple(out)
