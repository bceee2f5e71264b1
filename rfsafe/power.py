"""Average transmitter power: mode duty factor, averaging-window fill, EIRP and ERP.

Average power = PEP x mode duty factor x transmit fraction, where the transmit
fraction is the largest share of any averaging window (the standard's averaging
time for the environment) that the declared on/off schedule can fill.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from rfsafe.errors import bad_value
from rfsafe.units import DIPOLE_GAIN_DBI

__all__ = [
    "DutyFactor", "duty_factor_table", "mode_duty_factor", "mode_ids",
    "window_fill", "average_power_w", "eirp_w", "erp_w",
]


@dataclass(frozen=True)
class DutyFactor:
    """A mode's duty factor relative to PEP, where the value came from, and whether it was read there.

    ``verification`` is one of the forms of :mod:`rfsafe.verification` (``"read in a reproduction of
    ...: ..."`` or ``"not confirmed"``).
    """

    mode: str
    description: str
    duty_factor: float
    source: str
    verification: str = "not confirmed"


@lru_cache(maxsize=1)
def duty_factor_table() -> dict[str, DutyFactor]:
    """The mode duty-factor table shipped as ``rfsafe/data/duty_factors.csv``.

    References
    ----------
    .. [1] FCC OET Bulletin 65 Supplement B (1997), Table 2, p. 14 (read in two reproductions; the AM
       rows were not in them and stay "not confirmed").
    """
    text = resources.files("rfsafe.data").joinpath("duty_factors.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(io.StringIO("".join(l for l in text.splitlines(True) if not l.startswith("#"))))
    return {r["mode"]: DutyFactor(r["mode"], r["description"], float(r["duty_factor"]), r["source"],
                                  (r.get("verification") or "").strip() or "not confirmed")
            for r in rows}


def mode_ids() -> tuple[str, ...]:
    """Mode identifiers accepted in station files."""
    return tuple(duty_factor_table())


def mode_duty_factor(mode: str, *, field: str = "mode") -> DutyFactor:
    """Look up a mode's duty factor; unknown modes are an input error."""
    table = duty_factor_table()
    if mode not in table:
        accepted = ", ".join(f'"{m}"' for m in table)
        raise bad_value(field, mode, f"is not a known mode (accepted: {accepted})")
    return table[mode]


def window_fill(on_minutes: float | None, off_minutes: float | None, averaging_minutes: float) -> float:
    """Largest fraction of any averaging window that an on/off schedule fills.

    For a periodic schedule of ``on`` minutes transmitting then ``off``
    minutes idle (period ``P = on + off``), a window of length ``W = n P + r``
    (``0 <= r < P``) holds at most ``n on + min(r, on)`` minutes of
    transmission, reached by starting the window at the start of an on
    period.

    Parameters
    ----------
    on_minutes, off_minutes : float or None
        Schedule [min]. ``None`` for both means continuous transmission.
    averaging_minutes : float
        Averaging time of the limit [min].

    Returns
    -------
    float
        Transmit fraction in (0, 1].

    References
    ----------
    .. [1] FCC OET Bulletin 65 Supplement B (1997), section on time
       averaging (a 10 min on / 10 min off schedule fills a 6 min window
       completely and 20 of 30 min of a 30 min window).

    Examples
    --------
    >>> window_fill(10, 10, 30)
    0.6666666666666666
    >>> window_fill(10, 10, 6)
    1.0
    """
    if on_minutes is None and off_minutes is None:
        return 1.0
    if on_minutes is None or off_minutes is None:
        raise ValueError("window_fill needs both on_minutes and off_minutes, or neither")
    if on_minutes <= 0 or off_minutes < 0 or averaging_minutes <= 0:
        raise ValueError("window_fill needs on_minutes > 0, off_minutes >= 0, averaging_minutes > 0")
    period = on_minutes + off_minutes
    n = math.floor(averaging_minutes / period)
    r = averaging_minutes - n * period
    return min(1.0, (n * on_minutes + min(r, on_minutes)) / averaging_minutes)


def average_power_w(pep_w: float, duty_factor: float, transmit_fraction: float) -> float:
    """Time-averaged power [W] = PEP [W] x duty factor x transmit fraction.

    References
    ----------
    .. [1] FCC OET Bulletin 65 Supplement B (1997), average power from PEP,
       mode duty factor and the on/off time within the averaging period.
    """
    return pep_w * duty_factor * transmit_fraction


def eirp_w(power_w, gain_dbi):
    """Effective isotropic radiated power [W] of ``power_w`` [W] into ``gain_dbi`` [dBi]."""
    return power_w * 10.0 ** (gain_dbi / 10.0)


def erp_w(power_w, gain_dbi):
    """Effective radiated power [W] relative to a half-wave dipole (gain - 2.15 dB)."""
    return power_w * 10.0 ** ((gain_dbi - DIPOLE_GAIN_DBI) / 10.0)
