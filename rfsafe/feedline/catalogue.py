"""Feedline and connector catalogue: generic cable classes by designation, connector series.

Every row of ``data/cables.csv`` and ``data/connectors.csv`` carries a ``source`` column saying where
the figures come from (no brand names) and a ``verification`` column saying which of them were read in a
published text or a reproduction of one (see :mod:`rfsafe.verification`).
"""

from __future__ import annotations

import csv
import functools
import math
from dataclasses import dataclass
from importlib import resources

from rfsafe.errors import bad_value, format_value

__all__ = [
    "CableClass", "ConnectorSeries", "CUSTOM_CABLE_ID",
    "cable_ids", "cable_class", "custom_cable", "matched_loss_db_per_100m", "matched_loss_db",
    "power_rating_w", "connector_ids", "connector_series", "check_catalogue_frequency", "CATALOGUE_FREQ_RANGE_MHZ",
]

#: Pseudo-id naming a cable described by the user (see :func:`custom_cable`).
CUSTOM_CABLE_ID = "custom"


@dataclass(frozen=True)
class CableClass:
    """A feedline class.

    Matched loss [dB/100 m] = ``loss_sqrt_db_per_100m * sqrt(f_MHz) + loss_lin_db_per_100m * f_MHz``
    (conductor loss grows with sqrt(f), dielectric loss with f). ``max_power_w`` is the average-power
    rating into a matched line at ``max_power_ref_freq_hz``; see :func:`power_rating_w`.
    """

    id: str
    description: str
    z0_ohm: float
    velocity_factor: float
    loss_sqrt_db_per_100m: float
    loss_lin_db_per_100m: float
    max_voltage_v_peak: float | None
    max_power_w: float | None
    source: str
    max_voltage_v_rms: float | None = None
    max_power_ref_freq_hz: float | None = None
    balanced: bool = False
    verification: str = "not confirmed"


@dataclass(frozen=True)
class ConnectorSeries:
    """A connector series with the peak-voltage figure usually quoted for it."""

    id: str
    description: str
    max_voltage_v_peak: float
    source: str
    verification: str = "not confirmed"


def _opt_float(text: str) -> float | None:
    text = text.strip()
    return float(text) if text else None


@functools.cache
def _cables() -> dict[str, CableClass]:
    out: dict[str, CableClass] = {}
    with resources.files("rfsafe.feedline").joinpath("data/cables.csv").open(encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            v_rms = _opt_float(row["max_voltage_v_rms"])
            ref_mhz = _opt_float(row["max_power_ref_freq_mhz"])
            out[row["id"]] = CableClass(
                id=row["id"], description=row["description"], z0_ohm=float(row["z0_ohm"]),
                velocity_factor=float(row["velocity_factor"]),
                loss_sqrt_db_per_100m=float(row["loss_sqrt_db_per_100m"]),
                loss_lin_db_per_100m=float(row["loss_lin_db_per_100m"]),
                max_voltage_v_peak=None if v_rms is None else v_rms * math.sqrt(2.0),
                max_power_w=_opt_float(row["max_power_w"]), source=row["source"],
                max_voltage_v_rms=v_rms,
                max_power_ref_freq_hz=None if ref_mhz is None else ref_mhz * 1e6,
                balanced=not row["id"].startswith("rg-"),
                verification=(row.get("verification") or "").strip() or "not confirmed",
            )
    return out


@functools.cache
def _connectors() -> dict[str, ConnectorSeries]:
    out: dict[str, ConnectorSeries] = {}
    with resources.files("rfsafe.feedline").joinpath("data/connectors.csv").open(encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            out[row["id"]] = ConnectorSeries(row["id"], row["description"],
                                             float(row["max_voltage_v_peak"]), row["source"],
                                             (row.get("verification") or "").strip() or "not confirmed")
    return out


def _id_list(ids) -> str:
    return ", ".join(f'"{i}"' for i in ids)


def cable_ids() -> tuple[str, ...]:
    """Ids of the catalogued cable classes (``"custom"`` is not one: see :func:`custom_cable`)."""
    return tuple(_cables())


def cable_class(cable_id: str, *, field: str = "cable") -> CableClass:
    """Look up a cable class by id.

    Raises
    ------
    InputError
        For an unknown id; the message lists the accepted ids.
    """
    cables = _cables()
    if cable_id in cables:
        return cables[cable_id]
    if cable_id == CUSTOM_CABLE_ID:
        raise bad_value(field, cable_id, "needs its own figures: give z0_ohm, loss_db_per_100m and "
                        "velocity_factor instead of a class id")
    raise bad_value(field, cable_id, f"is not a known cable class (known: {_id_list(cables)}, "
                    f'or "{CUSTOM_CABLE_ID}" with z0_ohm, loss_db_per_100m, velocity_factor)')


def custom_cable(*, z0_ohm: float, loss_db_per_100m: float, freq_hz: float, velocity_factor: float,
                 max_voltage_v_peak: float | None = None, max_power_w: float | None = None,
                 field: str = "cable") -> CableClass:
    """A cable described by the user: one matched-loss figure at one frequency.

    The loss is scaled with sqrt(f) away from ``freq_hz`` (conductor loss dominant, the usual case
    for coax and open lines at HF and VHF); at ``freq_hz`` itself it is exact.

    Parameters
    ----------
    z0_ohm : float
        Characteristic impedance [ohm], > 0.
    loss_db_per_100m : float
        Matched loss at ``freq_hz`` [dB/100 m], >= 0.
    freq_hz : float
        Frequency of the loss figure [Hz], > 0.
    velocity_factor : float
        Velocity factor, 0 < vf <= 1.
    max_voltage_v_peak : float, optional
        Peak voltage rating [V].
    max_power_w : float, optional
        Average power rating at ``freq_hz`` into a matched line [W].
    """
    _check_positive(f"{field}.z0_ohm", z0_ohm, "ohm")
    if not (math.isfinite(loss_db_per_100m) and loss_db_per_100m >= 0):
        raise bad_value(f"{field}.loss_db_per_100m", loss_db_per_100m, "must be a number >= 0 dB/100 m")
    _check_positive(f"{field}.freq_hz", freq_hz, "Hz")
    if not (math.isfinite(velocity_factor) and 0 < velocity_factor <= 1):
        raise bad_value(f"{field}.velocity_factor", velocity_factor, "must be > 0 and <= 1")
    if max_voltage_v_peak is not None:
        _check_positive(f"{field}.max_voltage_v_peak", max_voltage_v_peak, "V")
    if max_power_w is not None:
        _check_positive(f"{field}.max_power_w", max_power_w, "W")
    f_mhz = freq_hz / 1e6
    return CableClass(
        id=CUSTOM_CABLE_ID, description="user-described cable", z0_ohm=float(z0_ohm),
        velocity_factor=float(velocity_factor),
        loss_sqrt_db_per_100m=float(loss_db_per_100m) / math.sqrt(f_mhz), loss_lin_db_per_100m=0.0,
        max_voltage_v_peak=None if max_voltage_v_peak is None else float(max_voltage_v_peak),
        max_power_w=None if max_power_w is None else float(max_power_w),
        source="user input", max_voltage_v_rms=None if max_voltage_v_peak is None
        else float(max_voltage_v_peak) / math.sqrt(2.0),
        max_power_ref_freq_hz=None if max_power_w is None else float(freq_hz),
    )


def _check_positive(field: str, value: float, unit: str) -> None:
    if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
        raise bad_value(field, value, f"must be a number > 0 {unit}")


def matched_loss_db_per_100m(cable: CableClass, freq_hz: float, *, field: str = "freq_hz") -> float:
    """Matched loss of a cable class [dB/100 m] at ``freq_hz`` [Hz].

    References
    ----------
    Two-term attenuation model alpha = k1 sqrt(f) + k2 f: conductor (skin-effect) loss proportional to
    sqrt(f), dielectric loss proportional to f; Pozar, *Microwave Engineering*, 4th ed., sec. 2.7
    (attenuation of a coaxial line, eq. 2.80-2.81 for the two loss terms).
    """
    _check_positive(field, freq_hz, "Hz")
    f_mhz = freq_hz / 1e6
    return cable.loss_sqrt_db_per_100m * math.sqrt(f_mhz) + cable.loss_lin_db_per_100m * f_mhz


#: Frequencies [MHz] at which a catalogue class's loss figures are taken to hold: coax classes 0.1-3000 MHz,
#: balanced lines 0.1-1000 MHz (the published loss figures they are fitted to lie within about 1-1000 MHz,
#: from memory; the two-term model is not extrapolated further). Outside, a unit slip is the likely cause.
CATALOGUE_FREQ_RANGE_MHZ = {False: (0.1, 3000.0), True: (0.1, 1000.0)}


def check_catalogue_frequency(cable: CableClass, freq_mhz: float, *, field: str = "freq_mhz") -> None:
    """Refuse a frequency [MHz] outside the range of a catalogue class's loss figures, with a unit hint.

    A kHz value given as MHz (14200 for 14.2) would otherwise give tens of dB of invented line loss and an
    exposure far too low; a GHz value (0.0142) the reverse.
    """
    lo, hi = CATALOGUE_FREQ_RANGE_MHZ[bool(cable.balanced)]
    if lo <= freq_mhz <= hi:
        return
    if freq_mhz > hi:
        guesses = [g for g in (freq_mhz / 1e3, freq_mhz / 1e6) if lo <= g <= hi]
    else:
        guesses = [g for g in (freq_mhz * 1e3,) if lo <= g <= hi]
    hint = f"; did you mean {guesses[0]:g} MHz? (give the frequency in MHz)" if guesses else " (give the frequency in MHz)"
    raise bad_value(field, freq_mhz, f"is outside {lo:g}-{hi:g} MHz, where the loss figures of cable class "
                    f"{format_value(cable.id)} hold{hint}; for another frequency use a custom cable with its loss there")


def matched_loss_db(cable: CableClass, freq_hz: float, length_m: float) -> float:
    """Matched loss [dB] of ``length_m`` [m] of ``cable`` at ``freq_hz`` [Hz] (see
    :func:`matched_loss_db_per_100m`)."""
    if not (isinstance(length_m, (int, float)) and math.isfinite(length_m) and length_m >= 0):
        raise bad_value("length_m", length_m, "must be a number >= 0 m")
    return matched_loss_db_per_100m(cable, freq_hz) * length_m / 100.0


def power_rating_w(cable: CableClass, freq_hz: float) -> float | None:
    """Average-power rating [W] of a matched line at ``freq_hz`` [Hz], or None if none is known.

    Scaled from the rating at the reference frequency by the ratio of attenuations (common practice:
    the rating is set by the heat per metre the cable can shed, which is proportional to attenuation
    times power).
    """
    if cable.max_power_w is None or cable.max_power_ref_freq_hz is None:
        return None
    a_ref = matched_loss_db_per_100m(cable, cable.max_power_ref_freq_hz)
    a = matched_loss_db_per_100m(cable, freq_hz)
    if a_ref == 0 or a == 0:
        return cable.max_power_w
    return cable.max_power_w * a_ref / a


def connector_ids() -> tuple[str, ...]:
    """Ids of the catalogued connector series."""
    return tuple(_connectors())


def connector_series(connector_id: str, *, field: str = "connector") -> ConnectorSeries:
    """Look up a connector series; InputError listing the accepted ids for an unknown one."""
    conns = _connectors()
    if connector_id not in conns:
        raise bad_value(field, connector_id, f"is not a known connector series (known: {_id_list(conns)})")
    return conns[connector_id]
