"""FCC exemption from routine RF exposure evaluation, 47 CFR 1.1307(b)(3).

A source (or a set of sources) that meets one of these tests is exempt from the
duty to perform a *routine evaluation*. It is never exempt from the exposure
limits of 47 CFR 1.1310 themselves: the station must comply either way.

Implemented: the 1 mW test (b)(3)(i)(A) (available power less than 1 mW); the SAR-based threshold P_th for
0.5-40 cm and 0.3-6 GHz (b)(3)(i)(B); the MPE-based ERP thresholds of Table 1 to
(b)(3)(i)(C), valid only for R >= lambda/2pi; and, for several sources, the
total-power form of (b)(3)(ii)(A) and the sum of fractions (b)(3)(ii)(B).

Verification: the 1 mW test, Table 1 of (i)(C) and the sum of fractions were read in the eCFR text of
47 CFR 1.1307 after FCC 19-126; the constants of the SAR-based formula (i)(B) appear there only as an
image and were not read (``not confirmed``). Each per-source result carries its criterion's state.
At an exact band edge of Table 1 the smaller threshold of the two adjoining rows applies.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import ClassVar
from importlib import resources

from rfsafe.errors import bad_value

__all__ = [
    "ExemptionSource", "SourceExemption", "ExemptionResult", "fcc_exemption",
    "erp_w", "erp_20cm_w", "sar_threshold_w", "mpe_erp_threshold_w", "mpe_erp_min_separation_m",
    "NOTE",
]

_C0_M_S = 299_792_458.0
#: Gain of a half-wave dipole over isotropic [dB], as used for ERP (common practice: 1.64).
_DIPOLE_DBI = 2.15
_ONE_MW_W = 1e-3
#: Verification state of each criterion (see rfsafe.verification).
VERIFICATION = {
    "1 mW": "read in 47 CFR 1.1307(b)(3)(i)(A) (eCFR text after FCC 19-126)",
    "1 mW total": "read in 47 CFR 1.1307(b)(3)(ii)(A) (eCFR text after FCC 19-126)",
    "SAR-based threshold": ("not confirmed (the constants of 47 CFR 1.1307(b)(3)(i)(B) appear in the eCFR "
                            "only as an image and were not read)"),
    "sum of fractions": "read in 47 CFR 1.1307(b)(3)(ii)(B) (eCFR text after FCC 19-126)",
    "none applicable": "not confirmed",
}
_SAR_FREQ_GHZ = (0.3, 6.0)
_SAR_SEPARATION_CM = (0.5, 40.0)

#: The statement every exemption result carries.
NOTE = ("An exemption under 47 CFR 1.1307(b)(3) removes only the duty to perform a routine RF "
        "exposure evaluation; it never removes the duty to comply with the exposure limits of "
        "47 CFR 1.1310, and the FCC may still require an evaluation. Local regulation and the "
        "regulator's own guidance govern.")

_REF = {
    "1 mW": "47 CFR 1.1307(b)(3)(i)(A)",
    "1 mW total": "47 CFR 1.1307(b)(3)(ii)(A)",
    "SAR-based threshold": "47 CFR 1.1307(b)(3)(i)(B)",
    "MPE-based ERP threshold": "47 CFR 1.1307(b)(3)(i)(C), Table 1",
    "sum of fractions": "47 CFR 1.1307(b)(3)(ii)(B)",
    "none applicable": "47 CFR 1.1307(b)(3)",
}


@dataclass(frozen=True)
class ExemptionSource:
    """One fixed RF source for the exemption test.

    Attributes
    ----------
    label : str
        Name of the source (for messages and results).
    freq_hz : float
        Operating frequency [Hz].
    avg_power_w : float
        Maximum time-averaged power delivered to the antenna [W].
    gain_dbi : float
        Antenna gain toward the person (peak gain by default, which is conservative) [dBi].
    separation_m : float
        Minimum distance from any part of the radiating structure to a person [m].
    """

    label: str
    freq_hz: float
    avg_power_w: float
    gain_dbi: float
    separation_m: float


@dataclass(frozen=True)
class SourceExemption:
    """Outcome of the exemption test for one source.

    Attributes
    ----------
    label : str
        The source label.
    criterion : str
        ``"1 mW"``, ``"1 mW total"``, ``"SAR-based threshold"``, ``"MPE-based ERP threshold"``
        or ``"none applicable"``.
    reference : str
        Paragraph of 47 CFR 1.1307(b)(3) that the criterion comes from.
    threshold_w : float or None
        Threshold [W] (None when no criterion applies).
    value_w : float
        Quantity compared with the threshold [W] (see ``value_kind``).
    value_kind : str
        ``"available power"``, ``"greater of available power and ERP"`` or ``"ERP"``.
    erp_w : float
        Effective radiated power, P * 10^((G_dBi - 2.15)/10) [W].
    fraction : float
        value_w / threshold_w [1]; ``math.inf`` when no criterion applies.
    margin_db : float or None
        10 log10(threshold_w / value_w) [dB], positive when below the threshold;
        None when no criterion applies.
    other_criteria : tuple[str, ...]
        Why the other criteria were not used for this source (not applicable, or a
        larger fraction).
    threshold_verification : str
        Whether the criterion's threshold was read in the published text (see
        :mod:`rfsafe.verification`); for the MPE-based table, the state of the row used.
    """

    label: str
    criterion: str
    reference: str
    threshold_w: float | None
    value_w: float
    value_kind: str
    erp_w: float
    fraction: float
    margin_db: float | None
    other_criteria: tuple[str, ...]
    threshold_verification: str = "not confirmed"

    #: Why a field has no finite value (the JSON writer puts it in ``<field>_note``).
    NONFINITE_NOTES: ClassVar[dict] = {
        "fraction": "no exemption criterion applies to this source (see other_criteria): no threshold to divide by",
    }


@dataclass(frozen=True)
class ExemptionResult:
    """Outcome of the 47 CFR 1.1307(b)(3) exemption test for a set of sources.

    Attributes
    ----------
    exempt : bool
        True when the sources are exempt from routine evaluation (never from compliance).
    criterion : str
        The criterion decided on, with its paragraph.
    sum_of_fractions : float
        Sum of the per-source fractions [1]; exempt needs <= 1. ``math.inf`` when some
        source has no applicable criterion.
    per_source : tuple[SourceExemption, ...]
        One entry per source, in input order.
    note : str
        States that an exemption removes only the duty to evaluate (see :data:`NOTE`).
    assumptions : tuple[str, ...]
        Assumptions made (stated, conservative).
    """

    exempt: bool
    criterion: str
    sum_of_fractions: float
    per_source: tuple[SourceExemption, ...]
    note: str
    assumptions: tuple[str, ...]

    #: Why a field has no finite value (the JSON writer puts it in ``<field>_note``).
    NONFINITE_NOTES: ClassVar[dict] = {
        "sum_of_fractions": "no exemption criterion applies to some source (see per_source): not exempt",
    }


def erp_w(avg_power_w, gain_dbi):
    """Effective radiated power: power times gain relative to a half-wave dipole.

    Parameters
    ----------
    avg_power_w : float
        Power delivered to the antenna [W].
    gain_dbi : float
        Antenna gain [dBi].

    Returns
    -------
    float
        ERP [W] = P * 10^((G_dBi - 2.15)/10).

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(B)-(C) (ERP relative to a half-wave dipole); 2.15 dBi = gain of a
    half-wave dipole, 1.64 (common practice).
    """
    return avg_power_w * 10.0 ** ((gain_dbi - _DIPOLE_DBI) / 10.0)


def erp_20cm_w(freq_hz: float) -> float:
    """ERP_20cm of the SAR-based exemption formula.

    Parameters
    ----------
    freq_hz : float
        Frequency [Hz], 0.3-6 GHz.

    Returns
    -------
    float
        ERP_20cm [W]: 2040 f mW for 0.3 <= f < 1.5 GHz, 3060 mW for 1.5 <= f <= 6 GHz.

    Raises
    ------
    InputError
        Outside 0.3-6 GHz, where the formula is not defined.

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(B), definition of ERP_20cm (from memory).
    """
    f_ghz = freq_hz / 1e9
    if not _SAR_FREQ_GHZ[0] <= f_ghz <= _SAR_FREQ_GHZ[1]:
        raise bad_value("freq_hz", freq_hz, "is outside 0.3-6 GHz, where the SAR-based threshold "
                        "of 47 CFR 1.1307(b)(3)(i)(B) is defined")
    return (2040.0 * f_ghz if f_ghz < 1.5 else 3060.0) * 1e-3


def sar_threshold_w(freq_hz: float, separation_m: float) -> float:
    """SAR-based exemption threshold P_th of 47 CFR 1.1307(b)(3)(i)(B).

    .. math::

        P_{th} = ERP_{20cm} (d / 20\\,cm)^x \\;(d \\le 20\\,cm), \\quad
        P_{th} = ERP_{20cm} \\;(20 < d \\le 40\\,cm), \\quad
        x = -\\log_{10}\\left(\\frac{60}{ERP_{20cm}[mW] \\sqrt{f[GHz]}}\\right)

    Parameters
    ----------
    freq_hz : float
        Frequency [Hz], 0.3-6 GHz.
    separation_m : float
        Separation distance [m], 0.005-0.40 m.

    Returns
    -------
    float
        P_th [W]; compared with the greater of the available maximum time-averaged
        power and the ERP.

    Raises
    ------
    InputError
        Outside 0.3-6 GHz or 0.5-40 cm, where the regulation does not allow the method.

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(B) (from memory; as amended by FCC 19-126, 2019).
    """
    d_cm = separation_m * 100.0
    if not _SAR_SEPARATION_CM[0] <= d_cm <= _SAR_SEPARATION_CM[1]:
        raise bad_value("separation_m", separation_m, "is outside 0.005-0.40 m, where the "
                        "SAR-based threshold of 47 CFR 1.1307(b)(3)(i)(B) may be used")
    erp20_mw = erp_20cm_w(freq_hz) * 1e3
    if d_cm > 20.0:
        return erp20_mw * 1e-3
    x = -math.log10(60.0 / (erp20_mw * math.sqrt(freq_hz / 1e9)))
    return erp20_mw * (d_cm / 20.0) ** x * 1e-3


@lru_cache(maxsize=1)
def _mpe_table() -> tuple[tuple[float, float, float, float, str, str], ...]:
    text = resources.files("rfsafe.limits").joinpath("data", "fcc_1307_b3_erp_table1.csv").read_text(
        encoding="utf-8")
    lines = [ln for ln in text.splitlines() if not ln.startswith("#")]
    rows = []
    for rec in csv.DictReader(io.StringIO("\n".join(lines))):
        if rec["freq_unit"] != "MHz":
            raise RuntimeError("fcc_1307_b3_erp_table1.csv: frequencies must be in MHz")
        rows.append((float(rec["freq_min"]) * 1e6, float(rec["freq_max"]) * 1e6,
                     float(rec["erp_coef_w"]), float(rec["freq_exp"]), rec["source"],
                     rec.get("verification", "") or "not confirmed"))
    return tuple(rows)


def mpe_erp_min_separation_m(freq_hz: float) -> float:
    """Smallest separation for which the MPE-based ERP table applies: lambda/2pi.

    Parameters
    ----------
    freq_hz : float
        Frequency [Hz].

    Returns
    -------
    float
        lambda / (2 pi) = c / (2 pi f) [m], about 47.7/f_MHz m.

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(C) ("R must be at least lambda/2pi").
    """
    return _C0_M_S / freq_hz / (2.0 * math.pi)


def mpe_erp_threshold_w(freq_hz: float, separation_m: float) -> tuple[float, str]:
    """MPE-based ERP threshold of Table 1 to 47 CFR 1.1307(b)(3)(i)(C).

    Parameters
    ----------
    freq_hz : float
        Frequency [Hz], 0.3 MHz-100 GHz.
    separation_m : float
        Minimum separation R from the radiating structure to a person [m]; must be at
        least lambda/2pi.

    Returns
    -------
    threshold_w : float
        ERP threshold [W], e.g. 3,450 R^2/f^2 for 1.34-30 MHz (R in m, f in MHz).
    source : str
        The table row used.

    Raises
    ------
    InputError
        Outside 0.3 MHz-100 GHz, or R < lambda/2pi (the table does not apply).

    Notes
    -----
    At an exact band edge (1.34, 30, 300, 1500 MHz) the smaller of the two rows' thresholds
    applies: the text does not say to which row an edge belongs, and the smaller threshold
    cannot grant an exemption the other row would refuse.

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(C), Table 1 (read in the eCFR text after FCC 19-126).
    """
    threshold, source, _ = _mpe_row(freq_hz, separation_m)
    return threshold, source


def _mpe_row(freq_hz: float, separation_m: float) -> tuple[float, str, str]:
    """(threshold [W], source, verification) of Table 1 to (b)(3)(i)(C); see :func:`mpe_erp_threshold_w`."""
    rows = _mpe_table()
    f_mhz = freq_hz / 1e6
    if not rows[0][0] <= freq_hz <= rows[-1][1]:
        raise bad_value("freq_hz", freq_hz, "is outside 0.3 MHz-100 GHz, the range of Table 1 to "
                        "47 CFR 1.1307(b)(3)(i)(C)")
    r_min = mpe_erp_min_separation_m(freq_hz)
    if separation_m < r_min:
        raise bad_value("separation_m", separation_m,
                        f"is less than lambda/2pi = {r_min:.4g} m at {f_mhz:g} MHz, where Table 1 "
                        "to 47 CFR 1.1307(b)(3)(i)(C) does not apply")
    hits = [(coef * separation_m ** 2 * f_mhz ** exp, source, ver)
            for lo, hi, coef, exp, source, ver in rows
            if lo <= freq_hz <= hi or math.isclose(freq_hz, lo, rel_tol=1e-12)
            or math.isclose(freq_hz, hi, rel_tol=1e-12)]
    if len(hits) > 1:   # an exact band edge: the stricter (smaller) threshold
        threshold, source, ver = min(hits)
        return threshold, f"band edge {f_mhz:g} MHz, the smaller threshold of two rows: {source}", ver
    if hits:
        return hits[0]
    raise RuntimeError(f"no row of Table 1 to 1.1307(b)(3)(i)(C) covers {freq_hz} Hz")  # data bug


def _finite(value: object, field: str, *, positive: bool) -> float:
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise bad_value(field, value, "is not a number") from None
    if not math.isfinite(x) or (positive and x <= 0):
        raise bad_value(field, value, "must be a finite number > 0" if positive else
                        "must be a finite number")
    return x


def _validate(sources: Sequence[ExemptionSource]) -> None:
    if isinstance(sources, ExemptionSource) or not isinstance(sources, Sequence) or not sources:
        raise bad_value("sources", sources if not isinstance(sources, ExemptionSource) else "one source",
                        "must be a non-empty list of ExemptionSource")
    for i, s in enumerate(sources):
        if not isinstance(s, ExemptionSource):
            raise bad_value(f"sources[{i}]", str(s), "is not an ExemptionSource")
        _finite(s.freq_hz, f"sources[{i}].freq_hz", positive=True)
        _finite(s.avg_power_w, f"sources[{i}].avg_power_w", positive=True)
        _finite(s.gain_dbi, f"sources[{i}].gain_dbi", positive=False)
        _finite(s.separation_m, f"sources[{i}].separation_m", positive=True)


def _entry(s: ExemptionSource, criterion: str, threshold_w: float | None, value_w: float,
           value_kind: str, other_criteria: tuple[str, ...], verification: str | None = None) -> SourceExemption:
    if threshold_w is None:
        fraction, margin = math.inf, None
    else:
        fraction = value_w / threshold_w
        margin = 10.0 * math.log10(threshold_w / value_w)
    return SourceExemption(s.label, criterion, _REF[criterion], threshold_w, value_w, value_kind,
                           erp_w(s.avg_power_w, s.gain_dbi), fraction, margin, other_criteria,
                           verification or VERIFICATION[criterion])


def _best_threshold(s: ExemptionSource) -> SourceExemption:
    """The SAR- or MPE-based criterion giving the smaller fraction (either may be used)."""
    erp = erp_w(s.avg_power_w, s.gain_dbi)
    options: list[tuple[str, float, float, str]] = []
    why_not: list[str] = []
    mpe_ver = None
    f_ghz, d_cm = s.freq_hz / 1e9, s.separation_m * 100.0
    if not _SAR_FREQ_GHZ[0] <= f_ghz <= _SAR_FREQ_GHZ[1]:
        why_not.append(f"SAR-based threshold: {f_ghz * 1e3:g} MHz is outside 300-6000 MHz")
    elif not _SAR_SEPARATION_CM[0] <= d_cm <= _SAR_SEPARATION_CM[1]:
        why_not.append(f"SAR-based threshold: separation {d_cm:g} cm is outside 0.5-40 cm")
    else:
        options.append(("SAR-based threshold", sar_threshold_w(s.freq_hz, s.separation_m),
                        float(max(s.avg_power_w, erp)), "greater of available power and ERP"))
    rows = _mpe_table()
    r_min = mpe_erp_min_separation_m(s.freq_hz)
    if not rows[0][0] <= s.freq_hz <= rows[-1][1]:
        why_not.append(f"MPE-based ERP threshold: {s.freq_hz / 1e6:g} MHz is outside 0.3-100000 MHz")
    elif s.separation_m < r_min:
        why_not.append(f"MPE-based ERP threshold: separation {s.separation_m:g} m is less than "
                       f"lambda/2pi = {r_min:.4g} m, where the table does not apply")
    else:
        threshold, _, mpe_ver = _mpe_row(s.freq_hz, s.separation_m)
        options.append(("MPE-based ERP threshold", threshold, erp, "ERP"))
    if not options:
        return _entry(s, "none applicable", None, float(max(s.avg_power_w, erp)),
                      "greater of available power and ERP", tuple(why_not))
    entries = [_entry(s, c, t, v, k, (), mpe_ver if c == "MPE-based ERP threshold" else None)
               for c, t, v, k in options]
    best = min(entries, key=lambda e: e.fraction)
    others = tuple(f"{e.criterion}: fraction {e.fraction:.3g} (not the smaller)" for e in entries
                   if e is not best)
    return SourceExemption(**{**best.__dict__, "other_criteria": tuple(why_not) + others})


def fcc_exemption(sources: Sequence[ExemptionSource]) -> ExemptionResult:
    """Exemption from routine RF exposure evaluation, 47 CFR 1.1307(b)(3), for fixed sources.

    Parameters
    ----------
    sources : sequence of ExemptionSource
        The sources; several sources are assumed to transmit in the same time-averaging
        period (conservative). Power [W], gain [dBi], separation [m], frequency [Hz].

    Returns
    -------
    ExemptionResult
        ``exempt``, the deciding ``criterion``, ``sum_of_fractions`` [1], one
        :class:`SourceExemption` per source, and ``note`` stating that an exemption
        removes only the duty to evaluate, never the duty to comply.

    Raises
    ------
    InputError
        An empty list, or a non-finite or non-positive frequency, power or separation
        (the message names ``sources[i].<field>``).

    Notes
    -----
    Single source: exempt if the available power is less than 1 mW ((i)(A); 1.0 mW is not
    exempt under it); otherwise if
    the fraction value/threshold is at most 1 under the SAR-based threshold ((i)(B),
    0.5-40 cm, 0.3-6 GHz, compared with the greater of power and ERP) or the MPE-based
    ERP threshold ((i)(C), R >= lambda/2pi, compared with ERP); where both apply the
    smaller fraction is used, as the rule allows either. Several sources: exempt if their
    total power is below 1 mW ((ii)(A), total-power form; the 2 cm spacing form needs
    the device geometry and is not used), else if the sum of the fractions is at most 1
    ((ii)(B)); the 1 mW test cannot be combined into the sum. A source to which no
    criterion applies makes the set not exempt: a routine evaluation is required.

    References
    ----------
    47 CFR 1.1307(b)(3)(i)(A)-(C) and (b)(3)(ii)(A)-(B), as amended by FCC 19-126 (2019)
    (from memory; see ``standards_notes/fcc_exemption.md``).
    """
    _validate(sources)
    assumptions = [
        "avg_power_w is the maximum time-averaged power delivered to the antenna",
        "ERP = avg_power_w * 10^((gain_dbi - 2.15)/10), with the gain toward the person "
        "(peak gain unless stated otherwise)",
        "separation_m is the minimum distance from any part of the radiating structure to a person",
    ]
    if len(sources) > 1:
        assumptions.append("all sources transmit in the same time-averaging period (conservative)")
    total_w = sum(s.avg_power_w for s in sources)

    if len(sources) == 1 and total_w < _ONE_MW_W:   # (i)(A): "less than 1 mW"
        s = sources[0]
        entry = _entry(s, "1 mW", _ONE_MW_W, float(s.avg_power_w), "available power", ())
        return ExemptionResult(True, f"1 mW test ({_REF['1 mW']})", entry.fraction, (entry,),
                               NOTE, tuple(assumptions))
    if len(sources) > 1 and total_w < _ONE_MW_W:
        entries = tuple(_entry(s, "1 mW total", _ONE_MW_W, float(s.avg_power_w), "available power", ())
                        for s in sources)
        return ExemptionResult(True, f"total power below 1 mW ({_REF['1 mW total']})",
                               total_w / _ONE_MW_W, entries, NOTE, tuple(assumptions))

    entries = tuple(_best_threshold(s) for s in sources)
    total = math.fsum(e.fraction for e in entries)
    missing = [e.label for e in entries if e.criterion == "none applicable"]
    if missing:
        names = ", ".join(f'"{m}"' for m in missing)
        return ExemptionResult(False, f"no exemption criterion of {_REF['none applicable']} applies "
                               f"to {names}: a routine evaluation is required", math.inf,
                               entries, NOTE, tuple(assumptions))
    exempt = total <= 1.0
    if len(sources) == 1:
        e = entries[0]
        criterion = f"{e.criterion} ({e.reference})"
    else:
        criterion = f"sum of fractions ({_REF['sum of fractions']})"
    if not exempt:
        criterion += ": threshold exceeded, a routine evaluation is required"
    return ExemptionResult(exempt, criterion, total, entries, NOTE, tuple(assumptions))
