"""Exposure reference levels of published RF-exposure standards, looked up by frequency.

The tables live in ``rfsafe/limits/data`` as one CSV per published table, in the
published units and band edges; ``sources.toml`` beside them names each source.
Formula rows are stored as ``coefficient * f**exponent`` (``f`` in the row's
frequency unit), so nothing is ever evaluated from text. Values are converted
to SI (Hz, W/m^2, V/m rms, A/m rms) once, when a table is loaded.
"""

from __future__ import annotations

import csv
import io
import math
import tomllib
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from importlib import resources

import numpy as np

from rfsafe.errors import InputError, bad_value, format_value
from rfsafe.verification import STATES, state_of

__all__ = [
    "STANDARD_IDS", "ENVIRONMENTS", "BASES", "ETA_377_OHM",
    "StandardInfo", "Limit", "standard_info", "limits_at", "exposure_ratio",
]

#: Identifiers of the standards rfsafe knows, in display order.
STANDARD_IDS = ("fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6", "eu1999")
#: Exposure environments; each standard's own words are in ``environment_label``.
ENVIRONMENTS = ("controlled", "uncontrolled")
#: ``time-averaged``: compare with the average over ``averaging_minutes``;
#: ``instantaneous``: compare with the field at peak envelope power.
BASES = ("time-averaged", "instantaneous")
#: Wave impedance the standards use for plane-wave equivalents [ohm] (common practice;
#: e.g. the 47 CFR 1.1310 Table 1 values satisfy S = E^2/377).
ETA_377_OHM = 377.0

_FREQ_UNIT_HZ = {"kHz": 1e3, "MHz": 1e6, "GHz": 1e9}
#: Power-density CSV columns and the factor to W/m^2 (1 mW/cm^2 = 10 W/m^2).
_S_COLUMNS = {"power_density_w_m2": 1.0, "power_density_mw_cm2": 10.0}


@dataclass(frozen=True)
class StandardInfo:
    """Description of one exposure standard as rfsafe applies it.

    Attributes
    ----------
    id : str
        One of :data:`STANDARD_IDS`.
    name, issuer, edition : str
        What the standard is, who publishes it, which edition.
    freq_min_hz, freq_max_hz : float
        Frequency range covered [Hz] (inclusive).
    environment_labels : dict[str, str]
        The standard's own words for ``controlled`` and ``uncontrolled``.
    power_density_unit : str
        Unit in which the standard publishes power density (``"mW/cm^2"`` or ``"W/m^2"``).
    references : tuple[str, ...]
        One line per published table: issuer, title, edition, table, where to read it,
        verification status.
    public_only : bool
        True when the standard has no occupational tier (``eu1999``): a controlled place is
        evaluated against the general-public levels, and its limits say so.
    """

    id: str
    name: str
    issuer: str
    edition: str
    freq_min_hz: float
    freq_max_hz: float
    environment_labels: dict[str, str]
    power_density_unit: str = "W/m^2"
    references: tuple[str, ...] = ()
    public_only: bool = False


@dataclass(frozen=True)
class Limit:
    """One exposure limit (reference level) at one frequency, environment and basis.

    Attributes
    ----------
    standard : str
        Standard id.
    environment : str
        ``"controlled"`` or ``"uncontrolled"``.
    environment_label : str
        The standard's own words for the environment.
    freq_hz : float
        Frequency [Hz].
    power_density_w_m2 : float or None
        Power-density limit [W/m^2]; None where the standard defines none.
    e_field_v_m : float or None
        Electric-field limit [V/m rms]; None where the standard defines none.
    h_field_a_m : float or None
        Magnetic-field limit [A/m rms]; None where the standard defines none.
    averaging_minutes : float or None
        Averaging time [min]; None for an instantaneous limit.
    basis : str
        ``"time-averaged"`` or ``"instantaneous"`` (compare the latter with the field at PEP).
    derived : tuple[str, ...]
        Names of quantities not tabulated but derived (plane wave, 377 ohm).
    source : str
        Published source of the row (document, table, band).
    power_density_e_w_m2, power_density_h_w_m2 : float or None
        Where a standard tabulates the E-based and H-based equivalent power densities
        separately (IEEE C95.1-2019 below 100 MHz) [W/m^2]; both must be met and
        ``power_density_w_m2`` is the smaller of the two. None elsewhere.
    notes : tuple[str, ...]
        How the limit is to be applied (plane-wave equivalents, quantities not defined, ...).
    verification : str
        Whether the row's values were read in the published text (see :mod:`rfsafe.verification`):
        ``"read in ..."``, ``"read in a reproduction of ...: ..."``, ``"partly read in ..."`` or
        ``"not confirmed"``. At an exact band edge, the weaker state of the two rows comes first.
    """

    standard: str
    environment: str
    environment_label: str
    freq_hz: float
    power_density_w_m2: float | None
    e_field_v_m: float | None
    h_field_a_m: float | None
    averaging_minutes: float | None
    basis: str
    derived: tuple[str, ...]
    source: str
    power_density_e_w_m2: float | None = None
    power_density_h_w_m2: float | None = None
    notes: tuple[str, ...] = ()
    verification: str = "not confirmed"


@dataclass(frozen=True)
class _PowerLaw:
    """``coef * f**exp`` with ``f`` in the row's frequency unit; ``coef`` already in SI."""

    coef: float
    exp: float

    def at(self, f_unit: float) -> float:
        return self.coef * f_unit ** self.exp


@dataclass(frozen=True)
class _Row:
    table: str
    environment: str
    freq_min_hz: float
    freq_max_hz: float
    freq_unit_hz: float
    e_field: _PowerLaw | None
    h_field: _PowerLaw | None
    power_density: _PowerLaw | None
    power_density_e: _PowerLaw | None
    power_density_h: _PowerLaw | None
    averaging: _PowerLaw | None
    basis: str
    power_density_note: str
    source: str
    verification: str
    derive_fields: bool


@dataclass(frozen=True)
class _Standard:
    info: StandardInfo
    rows: tuple[_Row, ...]


def _data_text(name: str) -> str:
    return resources.files("rfsafe.limits").joinpath("data", name).read_text(encoding="utf-8")


@lru_cache(maxsize=1)
def _sources() -> dict:
    """Parsed ``data/sources.toml``."""
    return tomllib.loads(_data_text("sources.toml"))


def _number(text: str) -> float:
    # Fraction parses "1/300", "4.21e-4", "1842": exact published forms, no eval.
    return float(Fraction(text.strip()))


def _read_csv(file: str) -> list[dict[str, str]]:
    lines = [ln for ln in _data_text(file).splitlines() if not ln.startswith("#")]
    return list(csv.DictReader(io.StringIO("\n".join(lines))))


def _law(rec: dict[str, str], column: str, exp_column: str, scale: float, file: str) -> _PowerLaw | None:
    coef = rec.get(column, "").strip()
    if not coef:
        return None
    exp = rec.get(exp_column, "").strip()
    if not exp:
        raise RuntimeError(f"{file}: {column} given without {exp_column}")  # a data bug
    return _PowerLaw(_number(coef) * scale, _number(exp))


def _parse_table(name: str, meta: dict) -> tuple[_Row, ...]:
    file = meta["file"]
    rows = []
    for rec in _read_csv(file):
        unit_hz = _FREQ_UNIT_HZ[rec["freq_unit"]]
        s_cols = [c for c in _S_COLUMNS if c in rec]
        s_col = s_cols[0] if s_cols else "power_density_w_m2"
        rows.append(_Row(
            table=name,
            environment=rec["environment"],
            freq_min_hz=_number(rec["freq_min"]) * unit_hz,
            freq_max_hz=_number(rec["freq_max"]) * unit_hz,
            freq_unit_hz=unit_hz,
            e_field=_law(rec, "e_field_v_m", "e_field_exp", 1.0, file),
            h_field=_law(rec, "h_field_a_m", "h_field_exp", 1.0, file),
            power_density=_law(rec, s_col, "power_density_exp", _S_COLUMNS[s_col], file),
            power_density_e=_law(rec, "power_density_e_w_m2", "power_density_e_exp", 1.0, file),
            power_density_h=_law(rec, "power_density_h_w_m2", "power_density_h_exp", 1.0, file),
            averaging=_law(rec, "averaging_minutes", "averaging_exp", 1.0, file),
            basis=rec["basis"],
            power_density_note=rec.get("power_density_note", "").strip(),
            source=rec["source"],
            verification=rec.get("verification", "").strip() or "not confirmed",
            derive_fields=bool(meta["derive_fields_from_power_density"]),
        ))
    return tuple(rows)


def _reference_line(meta: dict) -> str:
    return (f"{meta['issuer']}, \"{meta['title']}\", {meta['edition']}, {meta['table']}; "
            f"read at: {meta['where']}; verification: {meta['verification']}")


@lru_cache(maxsize=None)
def _standard(standard: str) -> _Standard:
    """Load and convert the tables of one standard (cached: parsed once per process)."""
    src = _sources()
    meta = src["standards"][standard]
    tables = [src["tables"][t] for t in meta["tables"]]
    info = StandardInfo(
        id=standard, name=meta["name"], issuer=meta["issuer"], edition=meta["edition"],
        freq_min_hz=meta["freq_min_mhz"] * 1e6, freq_max_hz=meta["freq_max_mhz"] * 1e6,
        environment_labels=dict(meta["environment_labels"]),
        power_density_unit=meta["power_density_unit"],
        references=tuple(_reference_line(t) for t in tables),
        public_only=bool(meta.get("public_only", False)),
    )
    rows = tuple(r for name in meta["tables"] for r in _parse_table(name, src["tables"][name]))
    return _Standard(info, rows)


def _check_standard(standard: object, field: str = "standard") -> str:
    if not isinstance(standard, str) or standard not in STANDARD_IDS:
        known = ", ".join(f'"{s}"' for s in STANDARD_IDS)
        raise bad_value(field, standard, f"is not a known standard (known: {known})")
    return standard


def _check_environment(environment: object, field: str = "environment") -> str:
    if not isinstance(environment, str) or environment not in ENVIRONMENTS:
        accepted = ", ".join(f'"{e}"' for e in ENVIRONMENTS)
        raise bad_value(field, environment, f"is not an environment (accepted: {accepted})")
    return environment


def _mhz_for_message(freq_hz: float) -> float | int:
    mhz = float(f"{freq_hz / 1e6:.10g}")
    return int(mhz) if mhz.is_integer() else mhz


def standard_info(standard: str) -> StandardInfo:
    """Describe one exposure standard.

    Parameters
    ----------
    standard : str
        One of :data:`STANDARD_IDS`.

    Returns
    -------
    StandardInfo
        Name, issuer, edition, frequency range [Hz], environment words, published
        power-density unit and the references of its tables.

    Raises
    ------
    InputError
        For an unknown standard id (the message lists the known ids).

    References
    ----------
    See ``rfsafe/limits/data/sources.toml`` and ``standards_notes/<id>.md``.
    """
    info = _standard(_check_standard(standard)).info
    # A fresh dict each call, so that a caller cannot change the cached one.
    return StandardInfo(**{**info.__dict__, "environment_labels": dict(info.environment_labels)})


def _covers(row: _Row, f: float) -> bool:
    """Closed band: at an exact edge both adjoining rows cover ``f`` (the stricter then applies)."""
    lo, hi = row.freq_min_hz, row.freq_max_hz
    return lo <= f <= hi or math.isclose(f, lo, rel_tol=1e-12) or math.isclose(f, hi, rel_tol=1e-12)


_PLANE_WAVE_NOTE = "S is the plane-wave equivalent power density (in parentheses in the table)"
_DERIVED_NOTE = ("the table gives S only; E and H are plane-wave equivalents (377 ohm), "
                 "valid in the far field only")


def _limit_from_row(std: _Standard, row: _Row, freq_hz: float) -> Limit:
    f = freq_hz / row.freq_unit_hz
    e = row.e_field.at(f) if row.e_field else None
    h = row.h_field.at(f) if row.h_field else None
    s = row.power_density.at(f) if row.power_density else None
    s_e = row.power_density_e.at(f) if row.power_density_e else None
    s_h = row.power_density_h.at(f) if row.power_density_h else None
    notes: list[str] = []
    derived: tuple[str, ...] = ()
    if s is None and s_e is not None and s_h is not None:
        s = min(s_e, s_h)
    if row.power_density_note == "plane-wave equivalent":
        notes.append(_PLANE_WAVE_NOTE)
    if row.derive_fields and s is not None and e is None and h is None:
        e = math.sqrt(s * ETA_377_OHM)
        h = math.sqrt(s / ETA_377_OHM)
        derived = ("e_field_v_m", "h_field_a_m")
        notes.append(_DERIVED_NOTE)
    info = std.info
    return Limit(
        standard=info.id, environment=row.environment,
        environment_label=info.environment_labels[row.environment], freq_hz=freq_hz,
        power_density_w_m2=s, e_field_v_m=e, h_field_a_m=h,
        averaging_minutes=row.averaging.at(f) if row.averaging else None,
        basis=row.basis, derived=derived, source=row.source,
        power_density_e_w_m2=s_e, power_density_h_w_m2=s_h, notes=tuple(notes),
        verification=row.verification,
    )


def _stricter(limits: list[Limit], freq_hz: float) -> Limit:
    """The stricter of the rows that meet at an exact band edge, value by value.

    Each quantity takes the smallest value any adjoining row gives (a quantity defined by one row
    only is kept), and the averaging time the shortest: the exposure ratio against the result is
    then the larger of the ratios against the rows, for any field. The published tables do not say
    to which row an exact edge belongs (47 CFR 1.1310 Table 1 and the others), so rfsafe takes the
    choice that cannot understate exposure.
    """
    def smallest(name):
        vals = [(getattr(lim, name), name in lim.derived) for lim in limits if getattr(lim, name) is not None]
        return min(vals, key=lambda v: (v[0], v[1])) if vals else (None, False)

    e, e_derived = smallest("e_field_v_m")
    h, h_derived = smallest("h_field_a_m")
    s, _ = smallest("power_density_w_m2")
    s_e, _ = smallest("power_density_e_w_m2")
    s_h, _ = smallest("power_density_h_w_m2")
    avg, _ = smallest("averaging_minutes")
    derived = tuple(n for n, d in (("e_field_v_m", e_derived), ("h_field_a_m", h_derived)) if d)
    notes = [n for lim in limits for n in lim.notes]
    if not derived and _DERIVED_NOTE in notes:
        notes.remove(_DERIVED_NOTE)
    ordered = sorted(limits, key=lambda lim: -STATES.index(state_of(lim.verification)))
    texts = list(dict.fromkeys(lim.verification for lim in ordered))
    mhz = _mhz_for_message(freq_hz)
    notes.append(f"exact band edge {mhz} MHz: the stricter of the {len(limits)} adjoining rows applies, value "
                 "by value (the text does not say to which row the edge belongs, or that could not be "
                 "confirmed; conservative)")
    first = limits[0]
    return Limit(
        standard=first.standard, environment=first.environment, environment_label=first.environment_label,
        freq_hz=freq_hz, power_density_w_m2=s, e_field_v_m=e, h_field_a_m=h, averaging_minutes=avg,
        basis=first.basis, derived=derived,
        source=f"band edge {mhz} MHz, stricter of: " + " | ".join(lim.source for lim in limits),
        power_density_e_w_m2=s_e, power_density_h_w_m2=s_h, notes=tuple(dict.fromkeys(notes)),
        verification="; at this band edge also: ".join(texts),
    )


def _finish(lim: Limit, info: StandardInfo, environment: str) -> Limit:
    """Notes that depend on the final values, and the public-only mapping of ``controlled``."""
    notes = list(lim.notes)
    s, e, h = lim.power_density_w_m2, lim.e_field_v_m, lim.h_field_a_m
    if lim.power_density_e_w_m2 is not None and lim.power_density_h_w_m2 is not None:
        notes.append(f"S_E = {lim.power_density_e_w_m2:.4g} W/m^2 and S_H = {lim.power_density_h_w_m2:.4g} "
                     "W/m^2 are both tabulated and both must be met; power_density_w_m2 is the smaller")
    if s is None:
        notes.append("no power-density limit is defined here: compare E and H, both must be met")
    elif e is None and h is None:
        notes.append("only the power density is defined here")
    if lim.basis == "instantaneous":
        notes.append("instantaneous limit (not time-averaged): compare with the field at peak "
                     "envelope power")
    changes: dict = {"notes": tuple(notes)}
    if environment != lim.environment:
        changes.update(environment=environment, environment_label=info.environment_labels[environment])
        changes["notes"] += ("this standard has no occupational tier (general public only): the "
                             "general-public reference levels are applied to this controlled place "
                             "(conservative)",)
    return Limit(**{**lim.__dict__, **changes})


@lru_cache(maxsize=4096)
def _limits_cached(standard: str, freq_hz: float, environment: str) -> tuple[Limit, ...]:
    std = _standard(standard)
    table_env = "uncontrolled" if std.info.public_only else environment
    by_basis: dict[str, list[Limit]] = {}
    for r in std.rows:
        if r.environment == table_env and _covers(r, freq_hz):
            by_basis.setdefault(r.basis, []).append(_limit_from_row(std, r, freq_hz))
    out = []
    for lims in by_basis.values():
        lim = lims[0] if len(lims) == 1 else _stricter(lims, freq_hz)
        out.append(_finish(lim, std.info, environment))
    return tuple(out)


def limits_at(standard: str, freq_hz: float, environment: str, *,
              field: str = "freq_mhz") -> tuple[Limit, ...]:
    """Exposure limits of a standard at one frequency and environment.

    Parameters
    ----------
    standard : str
        One of :data:`STANDARD_IDS`.
    freq_hz : float
        Frequency [Hz].
    environment : str
        ``"controlled"`` or ``"uncontrolled"``.
    field : str, optional
        Field name used in the error message for an out-of-range frequency (the value is
        reported in MHz), e.g. ``"bands[2].freq_mhz"``.

    Returns
    -------
    tuple of Limit
        One limit per basis: normally one (time-averaged); two for Safety Code 6 below
        10 MHz (the nerve-stimulation limit with basis ``"instantaneous"`` and the
        time-averaged limit), one (instantaneous) for Safety Code 6 below 100 kHz.
        Power density [W/m^2], E [V/m rms], H [A/m rms], averaging time [min].

    Raises
    ------
    InputError
        Unknown standard or environment (the message lists the accepted ids), a
        frequency that is not a finite number, or outside the standard's range.

    Notes
    -----
    Formula rows are evaluated as published (``f`` in the unit of the table's
    frequency column). Where a standard does not define a quantity it is None, never
    invented; the only derived values are the FCC plane-wave E and H above 300 MHz
    (:math:`E = \\sqrt{377 S}`, :math:`H = \\sqrt{S/377}`), listed in ``derived``.
    At an exact band edge the stricter of the adjoining rows applies, value by value (the
    smallest E, H and S of the rows, the shortest averaging time): the tables do not say to
    which row an edge belongs, and this choice cannot understate exposure. Each limit carries
    its row's ``verification``. For a standard without an occupational tier (``eu1999``) a
    controlled environment gets the general-public levels, with a note saying so.

    References
    ----------
    .. [1] 47 CFR 1.1310(e)(1), Table 1 (FCC, 2019).
    .. [2] ICNIRP, "Guidelines for limiting exposure to electromagnetic fields
       (100 kHz to 300 GHz)", Health Phys. 118(5):483-524, 2020, Table 5.
    .. [3] ICNIRP, "Guidelines for limiting exposure to time-varying electric, magnetic,
       and electromagnetic fields (up to 300 GHz)", Health Phys. 74(4):494-522, 1998,
       Tables 6 and 7.
    .. [4] IEEE Std C95.1-2019, whole-body exposure reference levels.
    .. [5] Health Canada, Safety Code 6 (2015), reference levels.
    """
    _check_standard(standard)
    _check_environment(environment)
    try:
        f = float(freq_hz)
    except (TypeError, ValueError):
        raise bad_value(field, freq_hz, "is not a number (frequency in MHz expected)") from None
    if not math.isfinite(f):
        raise InputError(f"{field}: {format_value(f)} is not a finite frequency")
    info = _standard(standard).info
    lo, hi = info.freq_min_hz, info.freq_max_hz
    inside = (lo <= f <= hi) or math.isclose(f, lo, rel_tol=1e-12) or math.isclose(f, hi, rel_tol=1e-12)
    if not inside:
        raise bad_value(field, _mhz_for_message(f),
                        f'is outside the range of standard "{standard}" '
                        f"({_mhz_for_message(lo)} to {_mhz_for_message(hi)} MHz)")
    limits = _limits_cached(standard, f, environment)
    if not limits:  # the tables cover the declared range; an empty result is a data bug
        raise RuntimeError(f"no {standard} row covers {f} Hz ({environment})")
    return limits


def exposure_ratio(limit: Limit, *, power_density_w_m2=None, e_field_v_m=None, h_field_a_m=None):
    """Exposure ratio against one limit: the largest of S/S_lim, (E/E_lim)^2, (H/H_lim)^2.

    Only the quantities both given and defined by the limit are compared. Arrays
    broadcast against each other (numpy rules); NaN propagates.

    Parameters
    ----------
    limit : Limit
        The limit to compare with (see :func:`limits_at`).
    power_density_w_m2 : float or array_like, optional
        Power density [W/m^2] (time-averaged, or at PEP for an instantaneous limit).
    e_field_v_m : float or array_like, optional
        Electric field [V/m rms].
    h_field_a_m : float or array_like, optional
        Magnetic field [A/m rms].

    Returns
    -------
    float or numpy.ndarray
        Exposure ratio [1]; 1 means exactly at the limit.

    Raises
    ------
    InputError
        If none of the given quantities is defined by the limit (e.g. a power density
        against ICNIRP 2020 below 30 MHz, which defines E and H only).

    References
    ----------
    Field ratios are squared so that every ratio is a power ratio (common practice,
    as in the summation of exposure fractions in ICNIRP 2020 and in
    47 CFR 1.1307(b)(3)(ii)(B)).
    """
    ratios = []
    pairs = (("power_density_w_m2", power_density_w_m2, limit.power_density_w_m2, 1),
             ("e_field_v_m", e_field_v_m, limit.e_field_v_m, 2),
             ("h_field_a_m", h_field_a_m, limit.h_field_a_m, 2))
    for _, value, lim, power in pairs:
        if value is not None and lim is not None:
            ratios.append((np.asarray(value, dtype=float) / lim) ** power)
    if not ratios:
        given = [name for name, value, _, _ in pairs if value is not None]
        defined = [name for name, _, lim, _ in pairs if lim is not None]
        raise InputError(
            f"exposure_ratio: given {', '.join(given) or 'nothing'}, but the {limit.standard} "
            f"limit at {_mhz_for_message(limit.freq_hz)} MHz defines only {', '.join(defined)}")
    out = ratios[0]
    for r in ratios[1:]:
        out = np.maximum(out, r)
    return float(out) if out.ndim == 0 else out
