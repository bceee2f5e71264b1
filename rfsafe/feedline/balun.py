"""Baluns at a mismatch: the voltage and current a balun sees, compared with its power rating.

A balun of impedance ratio n:1 (balanced side : unbalanced side, e.g. 4:1 for 200 ohm : 50 ohm) is
modelled as an ideal transformer: V_balanced = sqrt(n) V_unbalanced, I_balanced = I_unbalanced / sqrt(n),
Z_balanced = n Z_unbalanced, plus its own matched loss. Its rating holds at its design impedance
(50 ohm on the unbalanced side, common practice). At a mismatch it is compared by the larger of the
voltage and the current it sees, each turned into the power that would give that voltage or current
at the design impedance (common practice for transformers: core loss and flux grow with voltage,
winding loss with current). Voltages and currents are peak values at PEP, as in
:mod:`rfsafe.feedline.stress`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from rfsafe.errors import bad_value

__all__ = ["BALUN_LOCATIONS", "BALUN_DESIGN_OHM", "BALUN_RULE", "BalunSpec", "BalunStress", "parse_balun_ratio",
           "balun_equivalent_power_w", "balun_stress"]

BALUN_LOCATIONS = ("transmitter", "antenna")
#: Design impedance of the unbalanced side [ohm] (common practice: baluns are made and rated for 50 ohm coax).
BALUN_DESIGN_OHM = 50.0
BALUN_RULE = ("balun rating holds at its design impedance (50 ohm unbalanced side, common practice); at a "
              "mismatch the PEP that would give the same voltage, or the same current, at that impedance is "
              "compared with the rating, the larger of the two (conservative: a continuous rating compared "
              "with the envelope peak)")
_RATIO_RE = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*:\s*1\s*$")


def parse_balun_ratio(text: str, *, field: str = "balun.ratio") -> float:
    """Impedance ratio n of an ``"n:1"`` balun (balanced side first): ``"4:1"`` -> 4.0.

    Examples
    --------
    >>> parse_balun_ratio("4:1"), parse_balun_ratio("1:1"), parse_balun_ratio("1.5:1")
    (4.0, 1.0, 1.5)
    """
    m = _RATIO_RE.match(text) if isinstance(text, str) else None
    ratio = float(m[1]) if m else math.nan
    if not (m and 1.0 <= ratio <= 64.0):
        raise bad_value(field, text, 'is not a balun ratio (accepted: "n:1" with the balanced side first, '
                        '1 <= n <= 64, e.g. "1:1", "4:1", "9:1")')
    return ratio


@dataclass(frozen=True)
class BalunSpec:
    """A balun in the feed system.

    Attributes
    ----------
    ratio : float
        Impedance ratio n (balanced : unbalanced = n : 1).
    location : str
        ``"transmitter"``: at the transmitter (or tuner) output, feeding a balanced line; the line's
        input impedance is divided by n on the way to the transmitter or tuner.
        ``"antenna"``: at the feedpoint, fed by an unbalanced line; the line sees Z_antenna / n.
    power_rating_w : float or None
        The maker's power rating [W] at the design impedance; None: not rated.
    loss_db : float
        Its own matched loss [dB] (0 by default: no loss subtracted, conservative for exposure).
    label : str
        The ratio as written (``"4:1"``), for display.
    """

    ratio: float
    location: str = "transmitter"
    power_rating_w: float | None = None
    loss_db: float = 0.0
    label: str = ""

    def check(self, field: str = "balun") -> None:
        """Raise InputError for values outside what is accepted."""
        if not (isinstance(self.ratio, (int, float)) and math.isfinite(self.ratio) and 1.0 <= self.ratio <= 64.0):
            raise bad_value(f"{field}.ratio", self.ratio, "must be an impedance ratio n, 1 <= n <= 64")
        if self.location not in BALUN_LOCATIONS:
            raise bad_value(f"{field}.location", self.location,
                            'is not a known location (known: "transmitter", "antenna")')
        if self.power_rating_w is not None and not (math.isfinite(self.power_rating_w) and self.power_rating_w > 0):
            raise bad_value(f"{field}.power_rating_w", self.power_rating_w, "must be a number > 0 W")
        if not (math.isfinite(self.loss_db) and 0 <= self.loss_db <= 10):
            raise bad_value(f"{field}.loss_db", self.loss_db, "must be a number >= 0 and <= 10 dB")


@dataclass(frozen=True)
class BalunStress:
    """What a balun sees at PEP (and on average, for heat)."""

    ratio: float
    label: str
    location: str
    design_unbalanced_ohm: float
    design_balanced_ohm: float
    voltage_unbalanced_v_peak: float
    current_unbalanced_a_peak: float
    voltage_balanced_v_peak: float
    current_balanced_a_peak: float
    matched_voltage_unbalanced_v_peak: float   # sqrt(2 PEP R_design): the same power at the design impedance
    equivalent_power_w: float                  # PEP-equivalent compared with the rating
    governing: str                             # "voltage" or "current"
    power_rating_w: float | None
    loss_db: float
    dissipation_avg_w: float                   # estimated heat: matched-loss fraction of the average equivalent
    rule: str


def balun_equivalent_power_w(v_unbalanced_v_peak, i_unbalanced_a_peak, design_ohm: float = BALUN_DESIGN_OHM):
    """PEP-equivalent [W] of a balun seeing these peak values on its unbalanced side: the larger of
    V^2 / (2 R) and I^2 R / 2 (the power that gives that voltage or that current at its design impedance R).

    Works on scalars and numpy arrays (elementwise larger of the two).
    """
    import numpy as np
    pv = np.asarray(v_unbalanced_v_peak, dtype=float) ** 2 / (2.0 * design_ohm)
    pi = np.asarray(i_unbalanced_a_peak, dtype=float) ** 2 * design_ohm / 2.0
    out = np.maximum(pv, pi)
    return float(out) if out.ndim == 0 else out


def balun_stress(spec: BalunSpec, *, voltage_v_peak: float, current_a_peak: float, pep_w: float,
                 avg_power_w: float) -> BalunStress:
    """The balun's voltage, current and equivalent power from the line's voltage and current at its end.

    Parameters
    ----------
    voltage_v_peak, current_a_peak : float
        Peak voltage [V] and current [A] at the line end the balun connects to (the line's input for
        ``location="transmitter"``: the balanced side; its antenna end for ``"antenna"``: the
        unbalanced side).
    pep_w, avg_power_w : float
        PEP and average power [W] (the average scales the heat estimate).

    References
    ----------
    Ideal transformer relations V2/V1 = sqrt(Z2/Z1), I2/I1 = sqrt(Z1/Z2) (any circuit-theory text,
    e.g. Pozar, *Microwave Engineering*, 4th ed., sec. 4.4 on impedance transformation); rating rule
    :data:`BALUN_RULE` (common practice).
    """
    n = spec.ratio
    if spec.location == "transmitter":
        v_bal, i_bal = voltage_v_peak, current_a_peak
        v_un, i_un = v_bal / math.sqrt(n), i_bal * math.sqrt(n)
    else:
        v_un, i_un = voltage_v_peak, current_a_peak
        v_bal, i_bal = v_un * math.sqrt(n), i_un / math.sqrt(n)
    pv = v_un ** 2 / (2.0 * BALUN_DESIGN_OHM)
    p_i = i_un ** 2 * BALUN_DESIGN_OHM / 2.0
    eq = max(pv, p_i)
    scale = eq / pep_w if pep_w > 0 else 0.0
    return BalunStress(
        ratio=n, label=spec.label or f"{n:g}:1", location=spec.location, design_unbalanced_ohm=BALUN_DESIGN_OHM,
        design_balanced_ohm=n * BALUN_DESIGN_OHM, voltage_unbalanced_v_peak=v_un, current_unbalanced_a_peak=i_un,
        voltage_balanced_v_peak=v_bal, current_balanced_a_peak=i_bal,
        matched_voltage_unbalanced_v_peak=math.sqrt(2.0 * pep_w * BALUN_DESIGN_OHM), equivalent_power_w=eq,
        governing="voltage" if pv >= p_i else "current", power_rating_w=spec.power_rating_w, loss_db=spec.loss_db,
        dissipation_avg_w=avg_power_w * scale * (1.0 - 10.0 ** (-spec.loss_db / 10.0)), rule=BALUN_RULE)
