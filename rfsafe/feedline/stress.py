"""Line, connector and tuner stress: voltage and current maxima along a mismatched lossy line at PEP,
heating of the line at its current maxima, headroom against ratings and the largest tolerable SWR.

Positions reported in results are distances from the **transmitter end** of the line [m]
(0 = transmitter, ``length_m`` = antenna). Voltages and currents are phasor magnitudes at PEP, i.e.
peak values of the RF sine at the envelope peak (``_v_peak``, ``_a_peak``); ``_v_rms``/``_a_rms``
are those divided by sqrt(2). SWR values are referred to the nominal (real) Z0 of the cable, as an
SWR meter calibrated for that impedance reads them.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field as dc_field
from typing import TYPE_CHECKING, ClassVar

import numpy as np

from rfsafe.bounds import MAX_LENGTH_M, MAX_LOSS_DB, MAX_POWER_W, MAX_SWR
from rfsafe.errors import InputError, bad_value
from rfsafe.feedline.catalogue import CableClass, connector_series, matched_loss_db_per_100m, power_rating_w
from rfsafe.feedline.line import (
    low_loss_complex_z0, mismatch_total_loss_db, propagation_constant,
    reflection_coefficient, reflection_from_swr, swr_from_reflection, exact_total_loss_db,
    line_voltage_current, swr_of_load,
)

if TYPE_CHECKING:   # the tuner networks and baluns are imported where a line declares one
    from rfsafe.feedline.balun import BalunSpec, BalunStress
    from rfsafe.feedline.matching import MatchingPart, TunerResult, TunerSpec

__all__ = ["PartStress", "LineResult", "evaluate_line", "THERMAL_RULE", "LOSS_MODEL_CLOSED",
           "LOSS_MODEL_EXACT", "TRANSMITTER_TARGET_OHM", "NO_CONNECTOR", "TUNER_SWR_SEARCH_TOP", "connector_ends"]

THERMAL_RULE = ("1/SWR rule (common practice): the cable's matched average-power rating is divided by "
                "(I_max / I_matched)^2, the local heating at the current maximum relative to a matched "
                "line carrying the same input power; on a lossless line this factor equals the SWR")
#: How connector loss enters every loss model: added in dB after the cable's loss with mismatch.
CONNECTOR_LOSS_RULE = "plus connector loss in dB (not scaled by the SWR)"
LOSS_MODEL_CLOSED = ("closed form, real Z0: L = 10 log10[(a^2 - |G|^2)/(a (1 - |G|^2))], a = 10^(ML/10), "
                     "ML the cable's matched loss (ARRL Antenna Book; Pozar eq. 2.93), " + CONNECTOR_LOSS_RULE)
LOSS_MODEL_EXACT = ("exact, complex Z0 = R0 (1 - j alpha/beta): P_in/P_load from the ABCD matrix of the line "
                    "(Pozar eq. 2.77-2.79, Table 4.1), " + CONNECTOR_LOSS_RULE)
#: Resistance a transmitter-end network presents to the transmitter [ohm] (common practice: 50 ohm).
TRANSMITTER_TARGET_OHM = 50.0
#: Connector id meaning "no connector at this end" (ladder line is usually connected without one).
NO_CONNECTOR = "none"
#: Highest SWR at which the tolerable SWR of tuner parts is searched (their stress has no closed-form bound).
TUNER_SWR_SEARCH_TOP = 100.0
_TUNER_PHASES = 36
_N_PHASES = 360


@dataclass(frozen=True)
class PartStress:
    """Stress of one part against its rating at the evaluated power."""

    part: str                  # "line", "line.heating", "connector.transmitter", "connector.antenna", "tuner.C1"
    quantity: str              # e.g. "voltage_v_peak", "current_a_rms", "equivalent_matched_power_w"
    stress: float
    rating: float | None
    unit: str
    headroom: float | None     # rating / stress (> 1 is within rating)
    largest_tolerable_swr: float | None   # inf: not reached at any SWR; None: not computed / exceeded at SWR 1
    tolerable_swr_note: str
    exceeded: bool
    rating_source: str
    status: str = "not rated"  # "ok" | "EXCEEDED" | "not rated" (no rating exists: never shown as "ok")
    rating_verification: str = "not confirmed"   # was the rating read in a published text (rfsafe.verification)
    #: why largest_tolerable_swr is what it is (JSON writes both None and inf as null): "at" (a finite SWR),
    #: "never_reached" (not reached at any SWR), "not_reached_in_search" (not reached up to the searched SWR),
    #: "exceeded_at_swr_1" (exceeded even with a matched line), "not_rated" (no rating), "not_computed"
    largest_tolerable_swr_case: str = dc_field(init=False, default="")
    #: why headroom is what it is: "at" (finite), "zero_stress" (no stress: infinite), "not_rated"
    headroom_case: str = dc_field(init=False, default="")

    def __post_init__(self):
        swr, note = self.largest_tolerable_swr, self.tolerable_swr_note or ""
        if self.rating is None:
            case = "not_rated"
        elif swr is None:
            case = "exceeded_at_swr_1" if note.startswith("rating exceeded even with a matched line") else "not_computed"
        elif math.isinf(swr):
            case = "never_reached" if note.startswith("rating not reached at any SWR") else "not_reached_in_search"
        else:
            case = "at"
        object.__setattr__(self, "largest_tolerable_swr_case", case)
        h = self.headroom
        object.__setattr__(self, "headroom_case", "not_rated" if h is None else
                           ("zero_stress" if math.isinf(h) else "at"))

    NONFINITE_NOTES: ClassVar[dict] = {
        "headroom": "no stress at this power: any rating holds",
        "largest_tolerable_swr": "the rating is not reached at any SWR searched (see tolerable_swr_note)",
    }


@dataclass(frozen=True)
class LineResult:
    """Result of :func:`evaluate_line`. Field names carry their units."""

    freq_hz: float
    pep_w: float
    avg_power_w: float
    length_m: float
    cable_id: str
    z0_ohm: complex                 # characteristic impedance used (complex with exact_complex_z0)
    load_ohm: complex | None        # antenna-end load of the line (None if only an SWR was given)
    load_assumption: str
    gamma_at_antenna: complex | None
    swr_at_antenna: float
    swr_at_transmitter: float
    return_loss_at_transmitter_db: float
    input_impedance_ohm: complex
    matched_loss_db: float          # the cable's matched loss (connectors not included)
    total_loss_db: float            # cable loss with mismatch, plus connector loss
    mismatch_extra_loss_db: float   # total - matched - connector: the extra loss caused by the SWR
    loss_model: str
    loss_fraction: float            # P_antenna / P_line input
    power_at_antenna_w: float       # at PEP
    avg_power_at_antenna_w: float
    line_dissipation_avg_w: float   # average power lost in the line (with the duty factor)
    line_voltage_v_peak: float
    line_voltage_v_rms: float
    line_voltage_max_position_m: float
    line_current_a_peak: float
    line_current_a_rms: float
    line_current_max_position_m: float
    voltage_at_transmitter_v_peak: float
    voltage_at_antenna_v_peak: float
    current_at_transmitter_a_peak: float
    current_at_antenna_a_peak: float
    matched_line_voltage_v_peak: float   # sqrt(2 P Z0): same input power, matched line, at the input
    thermal_rule: str
    part_stresses: tuple[PartStress, ...]
    headroom: dict[str, float | None]
    largest_tolerable_swr: dict[str, float | None]
    profile_kind: str
    profile_position_m: np.ndarray
    profile_voltage_v_peak: np.ndarray
    profile_current_a_peak: np.ndarray
    tuner: TunerResult | None
    tuner_parts: tuple[MatchingPart, ...]   # parts of the chosen network (empty without a tuner)
    swr_seen_by_transmitter: float
    exceeded_parts: tuple[str, ...]
    notes: tuple[str, ...] = dc_field(default=())
    first_failure: str = ""               # one line: which rated part fails first, at what SWR
    first_failure_part: str | None = None
    first_failure_swr: float | None = None   # SWR at the antenna end; 1.0: exceeded even when matched
    NONFINITE_NOTES: ClassVar[dict] = {
        "first_failure_swr": "no rated part reaches its rating at any SWR searched (see first_failure)",
        "return_loss_at_transmitter_db": "perfect match at the transmitter end: no reflection",
        "largest_tolerable_swr": "the part's rating is not reached at any SWR searched (see part_stresses)",
        "headroom": "no stress at this power: any rating holds",
    }
    not_rated_parts: tuple[str, ...] = ()
    balun: BalunStress | None = None
    connector_at_transmitter: str | None = None   # connector series id, or None: no connector at that end
    connector_at_antenna: str | None = None
    connector_loss_db: float = 0.0  # added to the cable's mismatched loss, never multiplied by the mismatch
    cable_verification: str = "not confirmed"   # which of the cable's figures were read in a published text
    #: per part, why largest_tolerable_swr / headroom has (no) value (see PartStress)
    largest_tolerable_swr_case: dict = dc_field(init=False, default_factory=dict)
    headroom_case: dict = dc_field(init=False, default_factory=dict)
    #: why first_failure_swr is what it is: "at", "exceeded_at_swr_1", "never_reached",
    #: "not_reached_in_search", "none_rated" (no part has a rating), "not_computed"
    first_failure_case: str = dc_field(init=False, default="")

    def __post_init__(self):
        parts = self.part_stresses
        object.__setattr__(self, "largest_tolerable_swr_case", {p.part: p.largest_tolerable_swr_case for p in parts})
        object.__setattr__(self, "headroom_case", {p.part: p.headroom_case for p in parts})
        swr = self.first_failure_swr
        if not any(p.rating is not None for p in parts):
            case = "none_rated"
        elif swr is None:
            case = "not_computed"
        elif math.isinf(swr):
            case = ("not_reached_in_search" if any(p.largest_tolerable_swr_case == "not_reached_in_search"
                                                   for p in parts) else "never_reached")
        elif swr == 1.0 and any(p.largest_tolerable_swr_case == "exceeded_at_swr_1" for p in parts):
            case = "exceeded_at_swr_1"
        else:
            case = "at"
        object.__setattr__(self, "first_failure_case", case)


def _positive(field: str, value, unit: str, *, allow_zero: bool = False) -> float:
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
    ok = ok and (value >= 0 if allow_zero else value > 0)
    if not ok:
        raise bad_value(field, value, f"must be a number {'>=' if allow_zero else '>'} 0 {unit}")
    return float(value)


def _grid(length_m: float, beta: float) -> np.ndarray:
    """Distances from the load: at least 16 points per half wavelength on the line."""
    if length_m == 0:
        return np.zeros(1)
    half_waves = length_m * beta / math.pi
    n = int(max(2001, math.ceil(16 * half_waves) + 1))
    return np.linspace(0.0, length_m, n)


def _refined_max(fun, d: np.ndarray, values: np.ndarray) -> tuple[float, float]:
    """Largest value of ``fun`` on [d0, d_end]: grid, then vectorised golden-section refinement of every
    grid local maximum within 3 % of the best (the grid may put the best lobe second)."""
    best = int(np.argmax(values))
    if d.size < 3:
        return float(values[best]), float(d[best])
    is_peak = np.r_[values[0] >= values[1], (values[1:-1] >= values[:-2]) & (values[1:-1] >= values[2:]),
                    values[-1] >= values[-2]]
    idx = np.nonzero(is_peak & (values >= 0.97 * values[best]))[0]
    lo = d[np.maximum(idx - 1, 0)]
    hi = d[np.minimum(idx + 1, d.size - 1)]
    r = (math.sqrt(5.0) - 1.0) / 2.0
    a, b = lo.copy(), hi.copy()
    for _ in range(80):
        c1 = b - r * (b - a)
        c2 = a + r * (b - a)
        left = fun(c1) >= fun(c2)
        b = np.where(left, c2, b)
        a = np.where(left, a, c1)
    xs = np.concatenate([0.5 * (a + b), d[idx]])
    fx = fun(xs)
    k = int(np.argmax(fx))
    return float(fx[k]), float(xs[k])


def _envelope_ends(g: float, r0: float, a_amp: float, p_in: float) -> tuple[float, float, float, float]:
    """Worst case over load phase on a real-Z0 line: (V_ant, V_tx, I_ant, I_tx) peak amplitudes.

    With net input power P and |G| at the load, P_f,L = P / (a - g^2/a) where a = e^{2 alpha l}
    (power ratio); the envelope |V+(d)| (1 + |G(d)|) is convex in d, so its maximum is at an end.
    """
    a = a_amp * a_amp
    pfl = p_in / (a - g * g / a)
    vpl = math.sqrt(2.0 * pfl * r0)
    v_ant = vpl * (1.0 + g)
    v_tx = vpl * (a_amp + g / a_amp)
    return v_ant, v_tx, v_ant / r0, v_tx / r0


def _tolerable_swr(stress_of_g, rating: float) -> tuple[float | None, str]:
    """Largest SWR (antenna end) with stress <= rating; stress_of_g increases with |G|."""
    if stress_of_g(0.0) > rating:
        return None, "rating exceeded even with a matched line (SWR 1) at this power"
    g_top = 1.0 - 1e-12
    if stress_of_g(g_top) <= rating:
        return math.inf, "rating not reached at any SWR at this power (line loss limits the stress)"
    lo, hi = 0.0, g_top
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if stress_of_g(mid) <= rating:
            lo = mid
        else:
            hi = mid
        if hi - lo < 1e-15:
            break
    return float(swr_from_reflection(lo)), ("worst case over the load phase, real-Z0 line, at this power; "
                                            "SWR at the antenna end")


def _stress(part, quantity, stress, rating, unit, tol, source) -> PartStress:
    headroom = None if rating is None else (math.inf if stress == 0 else rating / stress)
    swr, note = (None, "no rating") if (rating is None or tol is None) else _tolerable_swr(tol, rating)
    if rating is not None and tol is None:
        note = "not computed for this part (depends on the complex load, not on SWR alone)"
    exceeded = rating is not None and stress > rating
    return PartStress(part, quantity, float(stress), rating, unit, headroom, swr, note, exceeded, source,
                      "not rated" if rating is None else ("EXCEEDED" if exceeded else "ok"))


#: Note of a part whose largest tolerable SWR was left out (``evaluate_line(..., tolerable_swr=False)``).
TOLERABLE_SWR_SKIPPED = "not computed in this evaluation (tolerable SWR left out)"


def _stress_without_swr(part, quantity, stress, rating, unit, tol, source) -> PartStress:
    """:func:`_stress` without the tolerable-SWR search (the same stress, headroom and status)."""
    headroom = None if rating is None else (math.inf if stress == 0 else rating / stress)
    exceeded = rating is not None and stress > rating
    return PartStress(part, quantity, float(stress), rating, unit, headroom, None,
                      "no rating" if rating is None else TOLERABLE_SWR_SKIPPED, exceeded, source,
                      "not rated" if rating is None else ("EXCEEDED" if exceeded else "ok"))


def connector_ends(field: str, connector, at_tx, at_ant, v_rating, balanced: bool):
    """Per-end connector: ``{"transmitter": (series id, rating [V peak], source) or None, "antenna": ...}``.

    ``connector`` puts one series at both ends (refused on a balanced line, which usually has none);
    ``at_tx``/``at_ant`` declare each end (``"none"``: no connector); ``v_rating`` overrides the series
    figure. InputError names the field under ``field``.
    """
    if connector is not None and (at_tx is not None or at_ant is not None):
        raise bad_value(f"{field}.connector", connector, "cannot be combined with connector_at_transmitter/"
                        "connector_at_antenna (give the series for both ends, or one per end)")
    if connector is not None and connector != NO_CONNECTOR and balanced:
        raise bad_value(f"{field}.connector", connector, "puts a coax connector at both ends of a balanced line, "
                        "which usually has none: declare the end that has one with connector_at_transmitter or "
                        f'connector_at_antenna (or "{NO_CONNECTOR}")')
    if connector is not None:
        at_tx = at_ant = connector
    ends = {}
    for end, cid in (("transmitter", at_tx), ("antenna", at_ant)):
        if cid is None or cid == NO_CONNECTOR:
            ends[end] = None
            continue
        series = connector_series(cid, field=f"{field}.connector_at_{end}" if connector is None
                                  else f"{field}.connector")
        ends[end] = (cid, series.max_voltage_v_peak, series.source)
    if v_rating is not None:
        v = _positive(f"{field}.connector_v_peak_rating", v_rating, "V")
        if all(e is None for e in ends.values()):
            if balanced or at_tx == NO_CONNECTOR or at_ant == NO_CONNECTOR:
                raise bad_value(f"{field}.connector_v_peak_rating", v_rating, "rates a connector, but no end has one "
                                "(declare connector_at_transmitter or connector_at_antenna)")
            ends = {e: ("rated by the user", v, "user rating") for e in ends}  # an unnamed series at both ends
        else:
            ends = {e: None if c is None else (c[0], v, "user rating") for e, c in ends.items()}
    return ends


def _with_rating_verification(parts: list, cable: CableClass, ends: dict) -> list:
    """Each part with whether its rating was read in a published text (see :mod:`rfsafe.verification`)."""
    user = "user rating (not a published figure; not confirmed by rfsafe)"

    def connector(end):
        c = ends.get(end)
        if c is None or c[2] == "user rating":
            return user
        return connector_series(c[0]).verification

    by_part = {"line": cable.verification,
               "line.heating": "not confirmed (cable power ratings are from memory)",
               "connector.transmitter": connector("transmitter"), "connector.antenna": connector("antenna")}
    return [dataclasses.replace(p, rating_verification="not rated" if p.rating is None else by_part.get(p.part, user))
            for p in parts]


def _tuner_tolerable_swrs(spec: TunerSpec, result: TunerResult, rated: dict, *, r0: float, z0: complex,
                          gam: complex, length: float, freq: float, balun_ratio: float, target: float,
                          gamma_now: complex | None, field: str) -> dict:
    """Largest SWR at the antenna end at which each rated tuner part stays within its rating.

    Worst case over the load phase (``_TUNER_PHASES`` phases plus the present one, each part's largest
    sample refined by golden-section search): for each load of
    that SWR the network is designed again as declared (same loaded Q or default rule; settings given
    as part values are replaced by the loaded Q they give; a T keeps its virtual resistance) at the
    same input power, and the part with the same name, kind and placement (the same role) is compared
    with its rating. The SWR is stepped up to ``TUNER_SWR_SEARCH_TOP``, then the first crossing is
    refined by bisection. Loads for which the network has no part in that role, or cannot be built,
    are skipped (said in the note).
    """
    from rfsafe.feedline.matching import design_tuner

    net = result.network
    if spec.c1_pf is not None:
        spec = dataclasses.replace(spec, c1_pf=None, l_uh=None, c2_pf=None, loaded_q=net.loaded_q)
    spec = dataclasses.replace(spec, matchable_region=False, capacitor_range_pf=None, inductor_range_uh=None)
    # A T keeps its virtual resistance (its source-side capacitor stays where it is; L and the load-side
    # capacitor are retuned): a fixed Q, defined at the lower-resistance end, would move that capacitor
    # and give a near-matched load a far higher virtual resistance than the present one.
    r_v0 = None
    if spec.topology == "t" and net.loaded_q is not None:
        r_v0 = min(net.target_resistance_ohm, net.load_ohm.real) * (1.0 + net.loaded_q ** 2)
    phases = np.linspace(0.0, 2.0 * np.pi, _TUNER_PHASES, endpoint=False)
    if gamma_now is not None and abs(gamma_now) > 0:
        phases = np.append(phases, np.angle(gamma_now))
    p_in = net.input_power_w
    tanh_gl = np.tanh(gam * length)

    def at(g: float, phase: float) -> dict:
        """Stress of each rated part for the load of SWR (1+g)/(1-g) at ``phase`` (empty if not buildable)."""
        gph = g * complex(math.cos(phase), math.sin(phase))
        if abs(1 - gph) == 0:
            return {}
        z = r0 * (1 + gph) / (1 - gph)
        if result.position == "transmitter":
            z = complex(z0 * (z + z0 * tanh_gl) / (z0 + z * tanh_gl)) / balun_ratio
        if not (math.isfinite(z.real) and math.isfinite(z.imag) and z.real > 0):
            return {}
        spec_z = spec
        if r_v0 is not None:
            r_low = min(net.target_resistance_ohm, z.real)
            r_v = max(r_v0, 1.44 * max(net.target_resistance_ohm, abs(z) ** 2 / z.real))  # 1.2 x the least Q
            spec_z = dataclasses.replace(spec, loaded_q=math.sqrt(r_v / r_low - 1.0))
        try:
            n = design_tuner(spec_z, load_ohm=z, freq_hz=freq, input_power_w=p_in, target_ohm=target,
                             field=field).network
        except InputError:
            return {}
        return {p.name: (p.voltage_v_peak if p.kind == "capacitor" else p.current_a_rms)
                for p in n.parts if rated.get(p.name) == (p.kind, p.placement)}

    def worst(g: float) -> dict:
        """Largest stress over the load phase: sampled, then golden-section refined around each part's
        sampled maximum (the samples alone could miss a peak between them)."""
        samples = [at(g, float(ph)) for ph in phases]
        out: dict = {}
        step = 2.0 * math.pi / _TUNER_PHASES
        for name in rated:
            vals = [sm.get(name, -1.0) for sm in samples]
            k = int(np.argmax(vals))
            if vals[k] < 0:
                continue
            a, b = float(phases[k]) - step, float(phases[k]) + step
            r = (math.sqrt(5.0) - 1.0) / 2.0
            best = vals[k]
            for _ in range(14):  # bracket shrinks to 0.6 % of 20 degrees
                c1, c2 = b - r * (b - a), a + r * (b - a)
                f1, f2 = at(g, c1).get(name, -1.0), at(g, c2).get(name, -1.0)
                best = max(best, f1, f2)
                if f1 >= f2:
                    b = c2
                else:
                    a = c1
            out[name] = best
        return out

    swr_grid = np.geomspace(1.0, TUNER_SWR_SEARCH_TOP, 25)
    g_grid = (swr_grid - 1.0) / (swr_grid + 1.0)
    curves = [worst(float(g)) for g in g_grid]
    how = (f"worst case over the load phase ({_TUNER_PHASES} phases and the present one, maximum refined), "
           + ("the T kept at its present virtual resistance (source-side capacitor unchanged; where that cannot "
              "match, 1.2 x the least Q) with L and the load-side capacitor retuned for each load"
              if r_v0 is not None else "the network redesigned for each load as declared")
           + ", at this power (loads where it has no part in this role, or cannot be built, skipped); SWR at the "
           "antenna end"
           + (" (the antenna's own SWR on the line's Z0)" if result.position == "antenna" else ""))
    out = {}
    for name in rated:
        rating = next(p.rating for p in net.parts if p.name == name)
        k = next((k for k, c in enumerate(curves) if c.get(name, 0.0) > rating), None)
        if k is None:
            out[name] = (math.inf, f"rating not reached up to SWR {TUNER_SWR_SEARCH_TOP:g} (searched no further); "
                         + how)
        elif k == 0:
            out[name] = (None, "rating exceeded even with a matched line (SWR 1) at this power")
        else:
            lo, hi = float(g_grid[k - 1]), float(g_grid[k])
            for _ in range(24):  # |Gamma| to about 1e-8
                mid = 0.5 * (lo + hi)
                if worst(mid).get(name, 0.0) > rating:
                    hi = mid
                else:
                    lo = mid
            out[name] = (float(swr_from_reflection(lo)), how)
    return out


def _first_failure(parts, pep: float, swr_now: float):
    """(text, part, swr): the rated part whose largest tolerable SWR is the lowest."""
    not_rated = [p.part for p in parts if p.rating is None]
    cands = []
    for p in parts:
        if p.rating is None:
            continue
        if p.largest_tolerable_swr is not None:
            cands.append((p.largest_tolerable_swr, p))
        elif p.tolerable_swr_note.startswith("rating exceeded even with a matched line"):
            cands.append((1.0, p))
    tail = f"; not rated: {', '.join(not_rated)}" if not_rated else ""
    if not cands:
        what = "no part has a rating" if not_rated else "no tolerable SWR could be computed"
        return f"{what}: which part fails first cannot be said{tail}", None, None
    swr, p = min(cands, key=lambda c: (c[0], c[1].headroom))  # a tie (e.g. at SWR 1): the least headroom
    if swr == 1.0 and p.largest_tolerable_swr is None:
        if p.exceeded:
            return (f"{p.part} ({p.quantity}) exceeds its rating even with a matched line (SWR 1) at {pep:g} W PEP"
                    + tail), p.part, 1.0
        return (f"{p.part} ({p.quantity}) is within its rating only at this load's phase: it would exceed it even "
                f"with a matched line (SWR 1) at {pep:g} W PEP" + tail), p.part, 1.0
    if math.isinf(swr):
        searched = (f" (tuner parts searched to SWR {TUNER_SWR_SEARCH_TOP:g})"
                    if any(c[1].part.startswith("tuner.") for c in cands) else "")
        return (f"no rated part reaches its rating at any SWR at {pep:g} W PEP{searched}" + tail), None, math.inf
    return (f"{p.part} ({p.quantity}) fails first, at SWR {swr:.3g} at the antenna end (worst case over the load "
            f"phase, {pep:g} W PEP; present SWR {swr_now:.3g})" + tail), p.part, float(swr)


def evaluate_line(*, pep_w: float, avg_power_w: float, freq_hz: float, cable: CableClass, length_m: float,
                  swr: float | None = None, load_ohm: complex | None = None,
                  connector_loss_db: float = 0.0, connector: str | None = None,
                  connector_v_peak_rating: float | None = None,
                  connector_at_transmitter: str | None = None, connector_at_antenna: str | None = None,
                  balun: BalunSpec | None = None,
                  tuner: TunerSpec | None = None, exact_complex_z0: bool = False,
                  profile_points: int = 401, field: str = "line", tolerable_swr: bool = True) -> LineResult:
    """Stress and loss of a feedline (and optional matching network) at PEP and average power.

    Parameters
    ----------
    pep_w : float
        Peak envelope power into the line (into the network, if one is at the transmitter) [W].
    avg_power_w : float
        Time-averaged power into the line [W] (PEP times duty factor), used for heating.
    freq_hz : float
        Frequency [Hz].
    cable : CableClass
        Line class (catalogue or :func:`~rfsafe.feedline.custom_cable`).
    length_m : float
        Line length [m], >= 0.
    swr : float, optional
        SWR at the antenna end (exactly one of ``swr`` / ``load_ohm``). The load phase is then unknown:
        voltages, currents and loss are the worst case over it; the input impedance is reported for
        the resistive load Z0 * SWR.
    load_ohm : complex, optional
        Impedance at the antenna end [ohm], resistance > 0.
    connector_loss_db : float
        Loss of connectors/adapters [dB], added to the cable's loss with mismatch (a matched loss of
        its own: it is not scaled by the SWR, and it does not lower the voltages and currents on the
        line, which are computed for the cable alone: conservative for stress).
    connector : str, optional
        Connector series at both ends (``connector_ids()``), rated by its common-practice figure;
        refused on a balanced line (which usually has no connector: declare each end instead).
    connector_v_peak_rating : float, optional
        Peak-voltage rating of the connectors [V]; overrides the series figure at every end that has
        one (with no end declared on a coax line: a connector of that rating at both ends).
    connector_at_transmitter, connector_at_antenna : str, optional
        Connector series at one end, or ``"none"``; an end left out has no connector.
    balun : BalunSpec, optional
        A balun at the transmitter end (feeding a balanced line) or at the antenna (see
        :mod:`rfsafe.feedline.balun`).
    tuner : TunerSpec, optional
        Matching network at the transmitter end or at the antenna feedpoint (needs ``load_ohm``).
    exact_complex_z0 : bool
        Use the complex Z0 = R0 (1 - j alpha/beta) throughout instead of the real-Z0 closed form.
    profile_points : int
        Samples of the reported standing-wave profile (the maxima use a finer grid).
    tolerable_swr : bool
        ``False`` leaves out the search for each rated part's largest tolerable SWR (its bisections and,
        with a rated tuner, the network designed again over load phases): ``largest_tolerable_swr`` is
        then None with the note :data:`TOLERABLE_SWR_SKIPPED` and the first failure is not said. Every
        other field (losses, powers, voltages, currents, stresses, headroom, exceeded parts) is the same
        as with ``True``: for repeated evaluations that read only those (rfsafe.remedies).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., sec. 2.3-2.7 (eq. 2.34, 2.40-2.42, 2.91, 2.93);
    ARRL Antenna Book, transmission-line chapter (mismatched-line loss, 1/SWR power derating).
    """
    pep = _positive(f"{field}.pep_w", pep_w, "W")
    avg = _positive(f"{field}.avg_power_w", avg_power_w, "W", allow_zero=True)
    if avg > pep * (1 + 1e-12):
        raise bad_value(f"{field}.avg_power_w", avg_power_w, f"must not exceed pep_w ({pep:g} W)")
    freq = _positive(f"{field}.freq_hz", freq_hz, "Hz")
    length = _positive(f"{field}.length_m", length_m, "m", allow_zero=True)
    c_loss = _positive(f"{field}.connector_loss_db", connector_loss_db, "dB", allow_zero=True)
    if (swr is None) == (load_ohm is None):
        raise bad_value(f"{field}.swr", swr, "give exactly one of swr and load_ohm")
    if pep > MAX_POWER_W:
        raise bad_value(f"{field}.pep_w", pep_w, f"is out of range (accepted: <= {MAX_POWER_W:g} W)")
    if length > MAX_LENGTH_M:
        raise bad_value(f"{field}.length_m", length_m, f"is out of range (accepted: <= {MAX_LENGTH_M:g} m)")
    if swr is not None:
        if not (isinstance(swr, (int, float)) and math.isfinite(swr) and 1 <= swr <= MAX_SWR):
            raise bad_value(f"{field}.swr", swr, f"must be a finite number >= 1 and <= {MAX_SWR:g}")
    else:
        try:
            load_c = complex(load_ohm)
        except (TypeError, ValueError):
            raise bad_value(f"{field}.load_ohm", load_ohm, "must be a complex impedance in ohm") from None
        if not (math.isfinite(load_c.real) and math.isfinite(load_c.imag) and load_c.real > 0):
            raise bad_value(f"{field}.load_ohm", load_c, "must have a resistance > 0 ohm (a passive antenna)")
        load_swr = swr_of_load(load_c, float(cable.z0_ohm))
        if not load_swr <= MAX_SWR:
            raise bad_value(f"{field}.load_ohm", load_c, f"gives an SWR of {load_swr:.3g} on this {cable.z0_ohm:g} ohm "
                            f"line (accepted: loads with an SWR <= {MAX_SWR:g}; a short, an open or a pure "
                            "reactance reflects everything and has no finite stress)")
    if tuner is not None:
        from rfsafe.feedline.matching import design_tuner
    if balun is not None:
        from rfsafe.feedline.balun import balun_equivalent_power_w, balun_stress
    if tuner is not None and load_ohm is None:
        raise bad_value(f"{field}.tuner", tuner.topology, "needs load_ohm: a network's parts depend on the "
                        "complex impedance, which an SWR alone does not fix")
    ends = connector_ends(field, connector, connector_at_transmitter, connector_at_antenna,
                           connector_v_peak_rating, cable.balanced)
    n_balun = 1.0
    if balun is not None:
        balun.check(f"{field}.balun")
        n_balun = balun.ratio if balun.location == "transmitter" else 1.0
        if tuner is not None and balun.location == "antenna" and tuner.position == "antenna":
            raise bad_value(f"{field}.balun.location", balun.location, "with a tuner also at the antenna is not "
                            "modelled (put the balun at the transmitter, or leave one of them out)")
    if not (isinstance(profile_points, int) and profile_points >= 2):
        raise bad_value(f"{field}.profile_points", profile_points, "must be an integer >= 2")

    notes: list[str] = []
    r0 = float(cable.z0_ohm)
    ml_db = matched_loss_db_per_100m(cable, freq) * length / 100.0   # the cable alone
    if not ml_db <= MAX_LOSS_DB:
        raise bad_value(f"{field}.length_m", length_m, f"gives a matched loss of {ml_db:.4g} dB at {freq / 1e6:g} MHz "
                        f"(accepted: lines with at most {MAX_LOSS_DB:g} dB: nothing measurable reaches the antenna)")
    loss_db_per_m = ml_db / length if length > 0 else 0.0
    gam = propagation_constant(loss_db_per_m, freq, cable.velocity_factor)
    z0 = low_loss_complex_z0(r0, gam) if exact_complex_z0 else complex(r0)
    a_amp = math.exp(gam.real * length)  # forward-wave amplitude ratio, input / load
    if c_loss:
        notes.append(f"connector loss {c_loss:g} dB added to the cable's loss with mismatch (not scaled by the "
                     "SWR); voltages and currents are those of the cable alone (conservative for stress)")

    # the network at the antenna feedpoint: the line is loaded by the network's input impedance
    tuner_result: TunerResult | None = None
    antenna_load = None if load_ohm is None else complex(load_ohm)
    if antenna_load is not None and balun is not None and balun.location == "antenna":
        antenna_load = antenna_load / balun.ratio   # the line sees the antenna through the balun
    if tuner is not None and tuner.position == "antenna":
        # design at a nominal power; analysed again below at the power the line delivers
        pre = design_tuner(tuner, load_ohm=antenna_load, freq_hz=freq, input_power_w=1.0, target_ohm=r0,
                           field=f"{field}.tuner")
        line_load = pre.network.input_impedance_ohm
    else:
        line_load = antenna_load

    d = _grid(length, gam.imag)
    x_out = length - np.linspace(0.0, length, profile_points)[::-1]  # distance from transmitter, ascending
    d_prof = length - x_out
    if line_load is not None:
        g_l_r0 = reflection_coefficient(line_load, r0)
        g_mag = abs(g_l_r0)
        if exact_complex_z0:
            tl_db = exact_total_loss_db(line_load, z0, gam, length)
            loss_model = LOSS_MODEL_EXACT
        else:
            tl_db = mismatch_total_loss_db(ml_db, g_mag)
            loss_model = LOSS_MODEL_CLOSED
        z_in = complex(z0 * (line_load + z0 * np.tanh(gam * length)) / (z0 + line_load * np.tanh(gam * length)))

        def vfun(dd):
            return np.abs(line_voltage_current(line_load, z0, gam, length, dd, pep)[0])

        def ifun(dd):
            return np.abs(line_voltage_current(line_load, z0, gam, length, dd, pep)[1])

        v_grid, i_grid = vfun(d), ifun(d)
        v_max, v_at = _refined_max(vfun, d, v_grid)
        i_max, i_at = _refined_max(ifun, d, i_grid)
        v_ends = vfun(np.array([0.0, length]))
        i_ends = ifun(np.array([0.0, length]))
        prof_v, prof_i = vfun(d_prof), ifun(d_prof)
        profile_kind = "standing wave for the given load"
        load_assumption = (("antenna impedance as given" if balun is None or balun.location != "antenna" else
                            f"antenna impedance as given, divided by the balun ratio {balun.ratio:g}")
                           if tuner is None or tuner.position != "antenna"
                           else "input impedance of the feedpoint network (antenna impedance as given)")
        gamma_ant = complex(reflection_coefficient(line_load, z0))
    else:
        g_mag = float(reflection_from_swr(swr))
        phases = np.linspace(0.0, 2.0 * np.pi, _N_PHASES, endpoint=False)
        if exact_complex_z0:
            gph = g_mag * np.exp(1j * phases)
            with np.errstate(divide="ignore"):
                zls = r0 * (1 + gph) / (1 - gph)
            ok = np.isfinite(zls) & (zls.real > 0)
            tl_db = float(np.max(exact_total_loss_db(zls[ok], z0, gam, length)))
            loss_model = LOSS_MODEL_EXACT + f"; worst of {_N_PHASES} load phases"
            prof_v = np.zeros_like(d_prof)
            prof_i = np.zeros_like(d_prof)
            v_grid = np.zeros_like(d)
            i_grid = np.zeros_like(d)
            for zl_k in zls[ok]:
                vk, ik = line_voltage_current(zl_k, z0, gam, length, d, pep)
                v_grid = np.maximum(v_grid, np.abs(vk))
                i_grid = np.maximum(i_grid, np.abs(ik))
                vk, ik = line_voltage_current(zl_k, z0, gam, length, d_prof, pep)
                prof_v = np.maximum(prof_v, np.abs(vk))
                prof_i = np.maximum(prof_i, np.abs(ik))
            kv, ki = int(np.argmax(v_grid)), int(np.argmax(i_grid))
            v_max, v_at, i_max, i_at = float(v_grid[kv]), float(d[kv]), float(i_grid[ki]), float(d[ki])
            v_ends = np.array([v_grid[0], v_grid[-1]])
            i_ends = np.array([i_grid[0], i_grid[-1]])
            profile_kind = f"envelope over {_N_PHASES} load phases (worst case; phase of the load unknown)"
            notes.append("exact complex-Z0 envelope sampled at 1 degree of load phase (relative error "
                         "below about 1e-4)")
        else:
            tl_db = mismatch_total_loss_db(ml_db, g_mag)
            loss_model = LOSS_MODEL_CLOSED
            a = a_amp * a_amp
            vpl = math.sqrt(2.0 * pep / (a - g_mag**2 / a) * r0)

            def env(dd):
                e = np.exp(gam.real * np.asarray(dd))
                return vpl * (e + g_mag / e)

            prof_v = env(d_prof)
            prof_i = prof_v / r0
            v_ant, v_tx, i_ant, i_tx = _envelope_ends(g_mag, r0, a_amp, pep)
            v_ends, i_ends = np.array([v_ant, v_tx]), np.array([i_ant, i_tx])
            v_max = max(v_ant, v_tx)
            v_at = 0.0 if v_ant >= v_tx else length
            i_max, i_at = max(i_ant, i_tx), (0.0 if i_ant >= i_tx else length)
            profile_kind = "envelope over all load phases (worst case; phase of the load unknown)"
        z_res = r0 * swr
        z_in = complex(z0 * (z_res + z0 * np.tanh(gam * length)) / (z0 + z_res * np.tanh(gam * length)))
        load_assumption = (f"only |Gamma| known (SWR {swr:g}): stresses and loss are the worst case over the "
                           f"load phase; input impedance shown for a resistive load of Z0*SWR = {z_res:.6g} ohm")
        gamma_ant = None

    tl_db = float(tl_db) + c_loss    # total = cable loss with mismatch + connector loss (README, Feedline loss)
    loss_fraction = 10.0 ** (-tl_db / 10.0)
    p_ant = pep * loss_fraction
    g_in = abs(reflection_coefficient(z_in, r0))
    swr_tx = float(swr_from_reflection(g_in))
    swr_ant = float(swr_from_reflection(g_mag))
    v_matched = math.sqrt(2.0 * pep * r0)
    i_matched = v_matched / r0

    # tuner
    swr_seen = swr_tx
    if n_balun != 1.0:  # the transmitter (or tuner) sees the line input through the balun
        swr_seen = float(swr_from_reflection(abs(reflection_coefficient(z_in / n_balun, TRANSMITTER_TARGET_OHM))))
    if tuner is not None:
        if tuner.position == "transmitter":
            tuner_result = design_tuner(tuner, load_ohm=z_in / n_balun, freq_hz=freq, input_power_w=pep,
                                        target_ohm=TRANSMITTER_TARGET_OHM, field=f"{field}.tuner")
            tgt = tuner.target_resistance_ohm or TRANSMITTER_TARGET_OHM
            swr_seen = float(swr_from_reflection(reflection_coefficient(tuner_result.network.input_impedance_ohm, tgt)))
            notes.append("network loss is not subtracted from the power into the line (conservative for "
                         "line stress and for exposure)")
        else:
            tuner_result = design_tuner(tuner, load_ohm=antenna_load, freq_hz=freq, input_power_w=p_ant,
                                        target_ohm=r0, field=f"{field}.tuner")
            notes.append("network loss is not subtracted from the power at the antenna (conservative for "
                         "exposure)")

    # parts
    parts: list[PartStress] = []
    stress_of = _stress if tolerable_swr else _stress_without_swr
    line_src = cable.source

    def env_line_v(g):
        va, vt, _, _ = _envelope_ends(g, r0, a_amp, pep)
        return max(va, vt)

    parts.append(stress_of("line", "voltage_v_peak", v_max, cable.max_voltage_v_peak, "V peak",
                         env_line_v, line_src + " (rms operating voltage x sqrt(2) compared with the peak)"))
    p_rating = power_rating_w(cable, freq)
    equiv = avg * (i_max / i_matched) ** 2

    def env_heat(g):
        _, _, ia, it = _envelope_ends(g, r0, a_amp, pep)
        return avg * (max(ia, it) / i_matched) ** 2

    parts.append(stress_of("line.heating", "equivalent_matched_power_w", equiv, p_rating, "W average",
                         env_heat if avg > 0 else None, line_src + "; " + THERMAL_RULE))
    if ends["transmitter"] is not None:
        parts.append(stress_of("connector.transmitter", "voltage_v_peak", float(v_ends[1]), ends["transmitter"][1],
                             "V peak", lambda g: _envelope_ends(g, r0, a_amp, pep)[1], ends["transmitter"][2]))
    if ends["antenna"] is not None:
        parts.append(stress_of("connector.antenna", "voltage_v_peak", float(v_ends[0]), ends["antenna"][1], "V peak",
                             lambda g: _envelope_ends(g, r0, a_amp, pep)[0], ends["antenna"][2]))
    balun_result = None
    if balun is not None:
        k_end = 1 if balun.location == "transmitter" else 0
        balun_result = balun_stress(balun, voltage_v_peak=float(v_ends[k_end]), current_a_peak=float(i_ends[k_end]),
                                    pep_w=pep, avg_power_w=avg)
        root_n = math.sqrt(n_balun)

        def balun_eq(g, k=k_end):
            e = _envelope_ends(g, r0, a_amp, pep)
            return balun_equivalent_power_w(e[k] / root_n, e[2 + k] * root_n)

        parts.append(stress_of("balun", "equivalent_power_w", balun_result.equivalent_power_w, balun.power_rating_w,
                             "W (PEP-equivalent)", balun_eq, "user rating; " + balun_result.rule))
        if balun.location == "transmitter" and not cable.balanced:
            notes.append("balun at the transmitter feeding an unbalanced (coax) line: check the declared location")
    elif tuner is not None and tuner.position == "transmitter" and cable.balanced:
        notes.append("no balun declared between the tuner and the balanced line (common practice: an unbalanced "
                     "tuner feeds ladder line through a balun, which then carries the line's input voltage and "
                     "current; declare it to have it rated)")
    if tuner_result is not None:
        rated = {p.name: (p.kind, p.placement) for p in tuner_result.network.parts if p.rating is not None}
        tol = {}
        if rated and tolerable_swr:
            tol = _tuner_tolerable_swrs(
                tuner, tuner_result, rated, r0=r0, z0=complex(z0), gam=complex(gam), length=length, freq=freq,
                balun_ratio=n_balun, gamma_now=None if line_load is None else complex(reflection_coefficient(
                    antenna_load if tuner.position == "antenna" else line_load, r0)),
                target=TRANSMITTER_TARGET_OHM if tuner.position == "transmitter" else r0, field=f"{field}.tuner")
        for p in tuner_result.network.parts:
            stress = p.voltage_v_peak if p.kind == "capacitor" else p.current_a_rms
            qty = "voltage_v_peak" if p.kind == "capacitor" else "current_a_rms"
            ps = stress_of(f"tuner.{p.name}", qty, stress, p.rating, p.rating_unit, None, "user rating")
            if p.name in tol:
                ps = dataclasses.replace(ps, largest_tolerable_swr=tol[p.name][0], tolerable_swr_note=tol[p.name][1])
            parts.append(ps)
        notes.extend(tuner_result.network.range_flags)
    if avg == 0:
        notes.append("average power 0 W: no heating")
    swr_now = float(swr_from_reflection(g_mag))
    if tuner is not None and tuner.position == "antenna":   # the line sees the tuner; its parts see the antenna
        swr_now = float(swr_from_reflection(abs(reflection_coefficient(antenna_load, r0))))
    first_text, first_part, first_swr = _first_failure(parts, pep, swr_now)
    if cable.max_voltage_v_peak is None:
        notes.append(f"cable class {cable.id!r} has no voltage rating: line voltage not compared")
    if p_rating is None:
        notes.append(f"cable class {cable.id!r} has no power rating: heating not compared")

    parts = _with_rating_verification(parts, cable, ends)
    return LineResult(
        freq_hz=freq, pep_w=pep, avg_power_w=avg, length_m=length, cable_id=cable.id, z0_ohm=complex(z0),
        load_ohm=line_load, load_assumption=load_assumption, gamma_at_antenna=gamma_ant,
        swr_at_antenna=swr_ant, swr_at_transmitter=swr_tx,
        return_loss_at_transmitter_db=float(-20 * math.log10(g_in)) if g_in > 0 else math.inf,
        input_impedance_ohm=z_in, matched_loss_db=ml_db, total_loss_db=float(tl_db),
        mismatch_extra_loss_db=float(tl_db) - ml_db - c_loss, loss_model=loss_model, loss_fraction=loss_fraction,
        power_at_antenna_w=p_ant, avg_power_at_antenna_w=avg * loss_fraction,
        line_dissipation_avg_w=avg * (1.0 - loss_fraction),
        line_voltage_v_peak=v_max, line_voltage_v_rms=v_max / math.sqrt(2.0),
        line_voltage_max_position_m=length - v_at,
        line_current_a_peak=i_max, line_current_a_rms=i_max / math.sqrt(2.0),
        line_current_max_position_m=length - i_at,
        voltage_at_transmitter_v_peak=float(v_ends[1]), voltage_at_antenna_v_peak=float(v_ends[0]),
        current_at_transmitter_a_peak=float(i_ends[1]), current_at_antenna_a_peak=float(i_ends[0]),
        matched_line_voltage_v_peak=v_matched, thermal_rule=THERMAL_RULE, part_stresses=tuple(parts),
        headroom={p.part: p.headroom for p in parts},
        largest_tolerable_swr={p.part: p.largest_tolerable_swr for p in parts},
        profile_kind=profile_kind, profile_position_m=x_out, profile_voltage_v_peak=np.asarray(prof_v),
        profile_current_a_peak=np.asarray(prof_i), tuner=tuner_result,
        tuner_parts=() if tuner_result is None else tuner_result.network.parts, swr_seen_by_transmitter=swr_seen,
        exceeded_parts=tuple(p.part for p in parts if p.exceeded), notes=tuple(notes),
        first_failure=first_text, first_failure_part=first_part, first_failure_swr=first_swr,
        not_rated_parts=tuple(p.part for p in parts if p.rating is None), balun=balun_result,
        connector_at_transmitter=None if ends["transmitter"] is None else ends["transmitter"][0],
        connector_at_antenna=None if ends["antenna"] is None else ends["antenna"][0], connector_loss_db=c_loss,
        cable_verification=cable.verification,
    )
