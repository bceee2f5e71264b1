"""Line, connector and tuner stress: voltage and current maxima along a mismatched lossy line at PEP,
heating of the line at its current maxima, headroom against ratings and the largest tolerable SWR.

Positions reported in results are distances from the **transmitter end** of the line [m]
(0 = transmitter, ``length_m`` = antenna). Voltages and currents are phasor magnitudes at PEP, i.e.
peak values of the RF sine at the envelope peak (``_v_peak``, ``_a_peak``); ``_v_rms``/``_a_rms``
are those divided by sqrt(2). SWR values are referred to the nominal (real) Z0 of the cable, as an
SWR meter calibrated for that impedance reads them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as dc_field

import numpy as np

from rfsafe.errors import bad_value
from rfsafe.feedline.catalogue import CableClass, connector_series, matched_loss_db_per_100m, power_rating_w
from rfsafe.feedline.line import (
    low_loss_complex_z0, mismatch_total_loss_db, propagation_constant,
    reflection_coefficient, reflection_from_swr, swr_from_reflection, exact_total_loss_db,
    line_voltage_current,
)
from rfsafe.feedline.matching import MatchingPart, TunerResult, TunerSpec, design_tuner

__all__ = ["PartStress", "LineResult", "evaluate_line", "THERMAL_RULE", "LOSS_MODEL_CLOSED",
           "LOSS_MODEL_EXACT", "TRANSMITTER_TARGET_OHM"]

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
    connector_loss_db: float = 0.0  # added to the cable's mismatched loss, never multiplied by the mismatch


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
    return PartStress(part, quantity, float(stress), rating, unit, headroom, swr, note,
                      rating is not None and stress > rating, source)


def evaluate_line(*, pep_w: float, avg_power_w: float, freq_hz: float, cable: CableClass, length_m: float,
                  swr: float | None = None, load_ohm: complex | None = None,
                  connector_loss_db: float = 0.0, connector: str | None = None,
                  connector_v_peak_rating: float | None = None,
                  tuner: TunerSpec | None = None, exact_complex_z0: bool = False,
                  profile_points: int = 401, field: str = "line") -> LineResult:
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
        Connector series at both ends (``connector_ids()``), rated by its common-practice figure.
    connector_v_peak_rating : float, optional
        Peak-voltage rating of the connectors [V]; overrides the series figure.
    tuner : TunerSpec, optional
        Matching network at the transmitter end or at the antenna feedpoint (needs ``load_ohm``).
    exact_complex_z0 : bool
        Use the complex Z0 = R0 (1 - j alpha/beta) throughout instead of the real-Z0 closed form.
    profile_points : int
        Samples of the reported standing-wave profile (the maxima use a finer grid).

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
    if swr is not None:
        if not (isinstance(swr, (int, float)) and math.isfinite(swr) and swr >= 1):
            raise bad_value(f"{field}.swr", swr, "must be a finite number >= 1")
    else:
        try:
            load_c = complex(load_ohm)
        except (TypeError, ValueError):
            raise bad_value(f"{field}.load_ohm", load_ohm, "must be a complex impedance in ohm") from None
        if not (math.isfinite(load_c.real) and math.isfinite(load_c.imag) and load_c.real > 0):
            raise bad_value(f"{field}.load_ohm", load_c, "must have a resistance > 0 ohm (a passive antenna)")
    if tuner is not None and load_ohm is None:
        raise bad_value(f"{field}.tuner", tuner.topology, "needs load_ohm: a network's parts depend on the "
                        "complex impedance, which an SWR alone does not fix")
    conn_rating, conn_source = None, ""
    if connector is not None:
        series = connector_series(connector, field=f"{field}.connector")
        conn_rating, conn_source = series.max_voltage_v_peak, series.source
    if connector_v_peak_rating is not None:
        conn_rating = _positive(f"{field}.connector_v_peak_rating", connector_v_peak_rating, "V")
        conn_source = "user rating"
    if not (isinstance(profile_points, int) and profile_points >= 2):
        raise bad_value(f"{field}.profile_points", profile_points, "must be an integer >= 2")

    notes: list[str] = []
    r0 = float(cable.z0_ohm)
    ml_db = matched_loss_db_per_100m(cable, freq) * length / 100.0   # the cable alone
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
        load_assumption = ("antenna impedance as given" if tuner is None or tuner.position != "antenna"
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
    if tuner is not None:
        if tuner.position == "transmitter":
            tuner_result = design_tuner(tuner, load_ohm=z_in, freq_hz=freq, input_power_w=pep,
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
    line_src = cable.source

    def env_line_v(g):
        va, vt, _, _ = _envelope_ends(g, r0, a_amp, pep)
        return max(va, vt)

    parts.append(_stress("line", "voltage_v_peak", v_max, cable.max_voltage_v_peak, "V peak",
                         env_line_v, line_src + " (rms operating voltage x sqrt(2) compared with the peak)"))
    p_rating = power_rating_w(cable, freq)
    equiv = avg * (i_max / i_matched) ** 2

    def env_heat(g):
        _, _, ia, it = _envelope_ends(g, r0, a_amp, pep)
        return avg * (max(ia, it) / i_matched) ** 2

    parts.append(_stress("line.heating", "equivalent_matched_power_w", equiv, p_rating, "W average",
                         env_heat if avg > 0 else None, line_src + "; " + THERMAL_RULE))
    if conn_rating is not None:
        parts.append(_stress("connector.transmitter", "voltage_v_peak", float(v_ends[1]), conn_rating, "V peak",
                             lambda g: _envelope_ends(g, r0, a_amp, pep)[1], conn_source))
        parts.append(_stress("connector.antenna", "voltage_v_peak", float(v_ends[0]), conn_rating, "V peak",
                             lambda g: _envelope_ends(g, r0, a_amp, pep)[0], conn_source))
    if tuner_result is not None:
        for p in tuner_result.network.parts:
            stress = p.voltage_v_peak if p.kind == "capacitor" else p.current_a_rms
            qty = "voltage_v_peak" if p.kind == "capacitor" else "current_a_rms"
            parts.append(_stress(f"tuner.{p.name}", qty, stress, p.rating, p.rating_unit, None, "user rating"))
    if avg == 0:
        notes.append("average power 0 W: no heating")
    if cable.max_voltage_v_peak is None:
        notes.append(f"cable class {cable.id!r} has no voltage rating: line voltage not compared")
    if p_rating is None:
        notes.append(f"cable class {cable.id!r} has no power rating: heating not compared")

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
        exceeded_parts=tuple(p.part for p in parts if p.exceeded), notes=tuple(notes), connector_loss_db=c_loss,
    )
