"""Evaluation of one station: power chain, line, gain, exposure at places, totals, verdict.

``assess`` orchestrates the physics modules; it does no I/O and no formatting.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from rfsafe import __version__
from rfsafe import exposure as ex
from rfsafe.errors import InputError, bad_value
from rfsafe.limits import ENVIRONMENTS, limits_at, standard_info
from rfsafe.power import average_power_w, eirp_w, erp_w, mode_duty_factor, window_fill
from rfsafe.results import (CAUTIONS, ComplianceDistance, ConfigurationResult, EvaluationResult,
                            PlaceExposure, PlaceResult, TransmitterShare)
from rfsafe.station.load import INTRINSIC_GAIN_DBI, LoadedStation
from rfsafe.station.schema import Antenna, Configuration, Feedline, Station
from rfsafe.units import DIPOLE_GAIN_DBI, M_PER_FT
from rfsafe.verification import figure_checks

__all__ = ["assess", "assess_with_emitters", "place_totals", "place_ratios", "Emitter", "emitters", "peak_gain_dbi",
           "antenna_outline", "NEAR_FIELD_FLAG"]

NEAR_FIELD_FLAG = "far-field estimate; near-field analysis or measurement recommended"

#: Largest total line loss accepted for an exposure evaluation [dB]: beyond it 99 % of the power is lost
#: in the line, which is far more likely a unit slip (kHz for MHz, feet for metres) than a real station,
#: and would understate exposure by that much.
MAX_LINE_LOSS_DB = 20.0


@dataclass(frozen=True)
class Emitter:
    """One configuration reduced to what a field computation needs (used by ``site``)."""

    configuration: str
    transmitter: str
    freq_hz: float
    x_m: float
    y_m: float
    height_m: float
    antenna: Antenna
    peak_gain_dbi: float
    avg_power_at_antenna_w: dict[str, float]
    pep_at_antenna_w: float
    eirp_w: dict[str, float]
    eirp_pep_w: float
    limits: dict[str, tuple]
    ground_factor: float
    solution: object = None       # moment-method solution for a wire antenna, else None
    extent: object = None         # rfsafe.antenna.extent.Extent: the radiating structure taken
    ground_bound_solution: object = None   # the same wire over the other idealised ground (bound; see _ground_bound_solution)


def peak_gain_dbi(antenna: Antenna, wire_gain_dbi: float | None = None, table=None) -> tuple[float, str]:
    """Peak gain [dBi] of a declared antenna and where it came from."""
    if antenna.gain_dbi is not None:
        return antenna.gain_dbi, "declared (dBi)"
    if antenna.gain_dbd is not None:
        return antenna.gain_dbd + DIPOLE_GAIN_DBI, "declared (dBd + 2.15)"
    if antenna.kind in INTRINSIC_GAIN_DBI:
        return INTRINSIC_GAIN_DBI[antenna.kind], f"{antenna.kind} model"
    if antenna.kind == "wire" and wire_gain_dbi is not None:
        return wire_gain_dbi, "moment-method solver"
    if antenna.kind == "table" and table is not None:
        return float(np.max(table.gain_dbi)), "largest gain of the pattern table"
    raise bad_value(f"antennas.{antenna.id}.gain_dbi", None, "is required for this antenna")


def _wire_solution(loaded: LoadedStation, ant: Antenna, freq_hz: float):
    """Moment-method solution of a wire antenna at one frequency (None for other kinds)."""
    if ant.kind != "wire":
        return None
    from rfsafe.antenna.wire.solver import solve_shared

    # One solve (and one set of unit-power near fields) per antenna and frequency, shared by the
    # configurations that use them and scaled to each one's power.
    index = next(k for k, a in enumerate(loaded.model.antennas) if a.id == ant.id)
    return solve_shared(loaded.wire_specs[ant.id], freq_hz, field_prefix=f"antennas[{index}].wire.")


def _wire_summary(solution):
    if solution is None:
        return None
    from rfsafe.results import WireSummary

    return WireSummary(feed_impedance_ohm=complex(solution.feed_impedance_ohm[0]), gain_dbi=float(solution.gain_dbi),
                       radiated_over_input_power=float(solution.radiated_over_input_power),
                       carried_over_input_power=float(solution.carried_power_w / solution.input_power_w))


#: Heights of a standing person's body at which near-field maps are evaluated, worst taken [m].
MAP_BODY_HEIGHTS_M = (0.5, 1.0, 1.5, 2.0)


def _near_wire(points: np.ndarray, spec) -> np.ndarray:
    """Points closer than max(10 radii, 5 cm) to any wire piece (boolean mask)."""
    from rfsafe.antenna.wire.geometry import point_segment_distances

    near = np.zeros(len(points), dtype=bool)
    for w in spec.wires:
        v = np.asarray(w.points_m, dtype=float)
        d = point_segment_distances(points[:, None, :], v[:-1], v[1:])   # (points, pieces)
        near |= (d < max(10 * w.radius_m, 0.05)).any(axis=1)
    return near


def _map_points(ant: Antenna, solution, loaded: LoadedStation):
    """The points of a wire antenna's near-field map: (spec, x, y, gx, gy, grid, near), ``grid`` every point at
    every body height and ``near`` those on or next to a conductor (left out)."""
    spec = solution.geometry_spec or loaded.wire_specs[ant.id]   # with the feedline shield, if modelled
    pts = np.array([p for w in spec.wires for p in w.points_m], dtype=float)
    margin = max(float(ex.near_field_distance_m(solution.freq_hz)), 3.0)
    x = np.linspace(pts[:, 0].min() - margin, pts[:, 0].max() + margin, 61)
    y = np.linspace(pts[:, 1].min() - margin, pts[:, 1].max() + margin, 61)
    gx, gy = np.meshgrid(x, y)
    # Fields scale with sqrt(power): every height is solved once at 1 W, then scaled per limit.
    grid = np.concatenate([np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, z)])
                           for z in MAP_BODY_HEIGHTS_M])
    # Points on or next to a conductor are left out (NaN): thin-wire fields do not hold there.
    return spec, x, y, gx, gy, grid, _near_wire(grid, spec)


def _map_fields_together(loaded: LoadedStation) -> None:
    """Unit fields of the near-field maps, computed together for every solution with the same geometry, frequency
    and map points (configurations on one antenna and band, their ground bounds, the antenna with a choke):
    see ``solver.unit_fields_together``. Only work shared ahead of :func:`_near_field_map`, which finds them
    kept (the same numbers); any input error is left for the configuration's own evaluation to raise in order.
    """
    st = loaded.model
    wired = [(c, next(a for a in st.antennas if a.id == c.antenna)) for c in st.configurations]
    wired = [(c, a) for c, a in wired if a.kind == "wire"]
    if not wired:     # no wire antenna: nothing to share (and the solver is not imported)
        return
    from rfsafe.antenna.wire.solver import _SHARED_ENTRIES, unit_fields_together

    if len({(a.id, c.freq_mhz) for c, a in wired}) * 2 > _SHARED_ENTRIES:   # the solutions would not stay shared
        return
    groups: dict = {}
    for c, ant in wired:
        try:
            freq_hz = c.freq_mhz * 1e6
            solution = _wire_solution(loaded, ant, freq_hz)
            twin = _ground_bound_solution(loaded, ant, solution, freq_hz)
            _spec, *_axes, grid, near = _map_points(ant, solution, loaded)
        except InputError:
            continue
        pts = grid[~near]
        sols = groups.setdefault((solution.freq_hz, pts.shape, pts.tobytes()), (pts, []))[1]
        sols.extend(s for s in (solution, twin) if s is not None and all(s is not t for t in sols))
    for pts, sols in groups.values():
        try:
            unit_fields_together(sols, pts, field="near-field map point")
        except InputError:
            pass


def _near_field_map(cid, ant: Antenna, solution, limits, avg_ant, pep_ant, loaded: LoadedStation, twin=None):
    """Horizontal near-field map around a wire antenna: ratios worst over body heights (and over the ground
    bound ``twin``, the same antenna over a perfect ground, where given)."""
    if solution is None:
        return None
    from rfsafe.limits import exposure_ratio
    from rfsafe.results import NearFieldMap

    spec, x, y, gx, gy, grid, near = _map_points(ant, solution, loaded)
    e_ratio, h_ratio = {}, {}
    e1 = np.full(len(grid), np.nan)
    h1 = np.full(len(grid), np.nan)
    field = f"near-field map of configuration {cid!r}, point"
    if twin is not None:   # one geometry and frequency: the two solutions' fields computed together
        from rfsafe.antenna.wire.solver import unit_fields_together

        unit_fields_together([solution, twin], grid[~near], field=field)
    e1[~near], h1[~near] = solution.fields_rms(grid[~near], 1.0, field=field)
    if twin is not None:
        e2, h2 = twin.fields_rms(grid[~near], 1.0, field=field)
        e1[~near], h1[~near] = np.maximum(e1[~near], e2), np.maximum(h1[~near], h2)
    keep = ~near.reshape(len(MAP_BODY_HEIGHTS_M), -1).any(axis=0)
    for env in ENVIRONMENTS:
        e_best = np.zeros(gx.size)
        h_best = np.zeros(gx.size)
        for lim in limits[env]:
            scale = math.sqrt(_power_for(lim, avg_ant[env], pep_ant))
            if lim.e_field_v_m is not None:
                r = np.asarray(exposure_ratio(lim, e_field_v_m=e1 * scale)).reshape(len(MAP_BODY_HEIGHTS_M), -1)
                e_best = np.maximum(e_best, np.nanmax(np.where(np.isnan(r), -np.inf, r), axis=0))
            if lim.h_field_a_m is not None:
                r = np.asarray(exposure_ratio(lim, h_field_a_m=h1 * scale)).reshape(len(MAP_BODY_HEIGHTS_M), -1)
                h_best = np.maximum(h_best, np.nanmax(np.where(np.isnan(r), -np.inf, r), axis=0))
        e_best[~keep] = np.nan
        h_best[~keep] = np.nan
        e_ratio[env], h_ratio[env] = e_best.reshape(gx.shape), h_best.reshape(gx.shape)
    return NearFieldMap(
        configuration=cid, antenna=ant.id,
        plane=f"horizontal, worst over heights {MAP_BODY_HEIGHTS_M[0]:g}-{MAP_BODY_HEIGHTS_M[-1]:g} m above ground"
              + ("; worse of free space/perfect ground" if twin is not None else ""),
        x_m=tuple(float(v) for v in x), y_m=tuple(float(v) for v in y), heights_m=MAP_BODY_HEIGHTS_M,
        wire_paths_m=tuple(tuple((float(p[0]), float(p[1])) for p in w.points_m) for w in spec.wires),
        max_e_ratio={env: float(np.nanmax(e_ratio[env])) for env in ENVIRONMENTS},
        max_h_ratio={env: float(np.nanmax(h_ratio[env])) for env in ENVIRONMENTS},
        excluded_points=int((~keep).sum()),
        e_ratio=e_ratio, h_ratio=h_ratio)


def _wire_loads(solution, pep_ant: float) -> tuple:
    """Lumped loads of a wire antenna at the PEP delivered to the antenna (peak voltage, current, power)."""
    if solution is None or not solution.load_labels:
        return ()
    from rfsafe.antenna.wire.loads import load_stress

    return load_stress(solution, pep_ant)


class _LoadParts:
    """A wire antenna's lumped loads as rated parts (peak voltage at the PEP), for the equipment verdict."""

    def __init__(self, loads):
        from rfsafe.feedline.stress import PartStress

        self.part_stresses = tuple(
            PartStress(f"load {ld.label}", "voltage_v_peak", float(ld.voltage_v_peak), ld.voltage_rating_v_peak,
                       "V peak", ld.voltage_headroom, None, "no SWR search for antenna loads",
                       ld.voltage_headroom is not None and ld.voltage_headroom < 1,
                       "declared voltage_rating_v_peak" if ld.voltage_rating_v_peak else "",
                       "not rated" if ld.voltage_headroom is None else (
                           "EXCEEDED" if ld.voltage_headroom < 1 else "ok"))
            for ld in loads)


def _route_distance_m(solution, place, heights) -> float:
    """Distance [m] from a place (any body height) to the modelled feedline shield."""
    from rfsafe.antenna.wire.geometry import point_segment_distances

    st = solution.structure
    on = np.isin(st.wire, solution.shield.route_wires)
    pts = np.array([[place.x_m, place.y_m, z] for z in heights], dtype=float)
    return float(point_segment_distances(pts[:, None, :], st.start_m[on][None], st.end_m[on][None]).min())


def _feedline_shield(loaded: LoadedStation, ant: Antenna, solution, limits, avg_ant, pep_ant: float, near_m: float,
                     twin=None):
    """Common-mode current of a modelled feedline shield and the choke that brings nearby places to the limit.

    Places within lambda/2pi of the route are judged at their worst body height (this configuration
    alone) and, where the ground is bounded, over the worse of both ground models (``twin``); the choke
    sits where the declared one is (else at the feed point), with its phase (else resistive).
    """
    if solution is None or solution.shield is None:
        return None
    from rfsafe.antenna.wire.loads import circuit_impedance_ohm
    from rfsafe.antenna.wire.shield import ChokeSweep, common_mode_current, required_choke_ohm
    from rfsafe.limits import exposure_ratio
    from rfsafe.results import FeedlineShieldResult

    spec = loaded.wire_specs[ant.id]
    cm = common_mode_current(solution, pep_ant, feed=spec.shield.feed)
    sweeps = []
    near_places = []
    for pi_, place in enumerate(loaded.model.places):
        heights = _heights(place)
        if _route_distance_m(solution, place, heights) < near_m:
            pts = [[place.x_m, place.y_m, z] for z in heights]
            near_places.append(place.label)
            for sol in (solution, twin):
                if sol is not None:
                    sweeps.append((place, ChokeSweep(sol, pts, field=f"places[{pi_}].body_heights_m")))

    def ratio_at(z: np.ndarray) -> np.ndarray:
        """Largest ratio over the places, their heights and limits, for each choke impedance in ``z``."""
        worst = np.zeros(np.shape(z))
        for place, sw in sweeps:
            e1, h1 = sw.fields_rms(z, 1.0)     # (len(z), heights)
            for lim in limits[place.environment]:
                scale = math.sqrt(_power_for(lim, avg_ant[place.environment], pep_ant))
                r = np.asarray(exposure_ratio(lim, e_field_v_m=e1 * scale, h_field_a_m=h1 * scale), dtype=float)
                worst = np.maximum(worst, r.max(axis=-1))
        return worst

    declared = spec.shield.choke
    z_now = circuit_impedance_ohm(declared, solution.freq_hz) if declared is not None else 0j
    if sweeps:
        need, note = required_choke_ohm(ratio_at, math.atan2(z_now.imag, z_now.real) if declared else 0.0)
        worst = float(ratio_at(np.array([z_now]))[0])
    else:
        need, note, worst = 0.0, "no place lies within lambda/2pi of the feedline route", None
    return FeedlineShieldResult(
        route_length_m=cm.route_length_m, far_end=cm.far_end, choke_impedance_ohm=cm.choke_impedance_ohm,
        choke_distance_m=cm.choke_distance_m, feed_current_a_rms=cm.feed_current_a_rms,
        max_current_a_rms=cm.max_current_a_rms, max_at_distance_m=cm.max_at_distance_m,
        places=tuple(near_places), worst_ratio=worst, required_choke_ohm=need,
        required_choke_note=note + "; places judged at their worst body height, this configuration alone")


def _schedule_text(c: Configuration) -> str:
    if c.schedule is None:
        return "continuous"
    return f"{c.schedule.on_minutes:g} min on / {c.schedule.off_minutes:g} min off"


#: Line results kept (see _line_result): the last few.
_KEPT_LINES = 64
_kept_lines: dict = {}


def _line_result(station: Station, index: int, c: Configuration, f: Feedline, pep_w: float,
                 thermal_avg_w: float):
    """The feedline evaluation of a configuration (``feedline.evaluate_line``), kept by everything it reads:
    the remedies' trials of a schedule leave it unchanged (the same inputs, the same frozen result)."""
    key = (station.exact_line_loss, index, c.freq_mhz, c.swr, c.load_r_ohm, c.load_x_ohm,
           None if c.tuner is None else c.tuner.model_dump_json(), f.model_dump_json(), pep_w, thermal_avg_w)
    hit = _kept_lines.get(key)
    if hit is None:
        hit = _kept_lines[key] = _evaluate_line(station, index, c, f, pep_w, thermal_avg_w)
        while len(_kept_lines) > _KEPT_LINES:
            _kept_lines.pop(next(iter(_kept_lines)))
    return hit


def _evaluate_line(station: Station, index: int, c: Configuration, f: Feedline, pep_w: float,
                   thermal_avg_w: float):
    from rfsafe import feedline as fl

    freq_hz = c.freq_mhz * 1e6
    if f.cable == "custom":
        loss = f.loss_db_per_100m if f.loss_db_per_100m is not None else f.loss_db_per_100ft / M_PER_FT
        cable = fl.custom_cable(z0_ohm=f.z0_ohm, loss_db_per_100m=loss, freq_hz=freq_hz,
                                velocity_factor=f.velocity_factor, max_voltage_v_peak=f.max_voltage_v_peak)
    else:
        cable = fl.cable_class(f.cable)
        if f.max_voltage_v_peak is not None:
            import dataclasses
            cable = dataclasses.replace(cable, max_voltage_v_peak=f.max_voltage_v_peak,
                                        verification=f"{cable.verification}; voltage rating declared in the "
                                                     "station file (not confirmed)")
    load = None
    if c.load_r_ohm is not None:
        load = complex(c.load_r_ohm, c.load_x_ohm or 0.0)
    tuner = None
    if c.tuner is not None:
        tuner = fl.TunerSpec(topology=c.tuner.kind, position=c.tuner.location, loaded_q=c.tuner.loaded_q,
                             inductor_q=c.tuner.inductor_q,
                             capacitor_max_voltage_v_peak=c.tuner.capacitor_v_peak_rating,
                             inductor_max_current_a_rms=c.tuner.inductor_a_rms_rating,
                             c1_pf=c.tuner.c1_pf, l_uh=c.tuner.l_uh, c2_pf=c.tuner.c2_pf,
                             capacitor_range_pf=None if c.tuner.capacitor_range_pf is None
                             else tuple(c.tuner.capacitor_range_pf),
                             inductor_range_uh=None if c.tuner.inductor_range_uh is None
                             else tuple(c.tuner.inductor_range_uh))
    balun = None
    if f.balun is not None:
        from rfsafe.feedline.balun import BalunSpec, parse_balun_ratio
        balun = BalunSpec(ratio=parse_balun_ratio(f.balun.ratio, field=f"feedlines[{f.id}].balun.ratio"),
                          location=f.balun.location, power_rating_w=f.balun.power_rating_w,
                          loss_db=f.balun.loss_db, label=f.balun.ratio)
    swr = None if load is not None else (c.swr if c.swr is not None else 1.0)  # no SWR: matched (flagged)
    return fl.evaluate_line(pep_w=pep_w, avg_power_w=thermal_avg_w, freq_hz=freq_hz, cable=cable,
                            length_m=f.length_m, swr=swr, load_ohm=load,
                            connector_loss_db=f.connector_loss_db, connector=f.connector,
                            connector_v_peak_rating=f.connector_v_peak_rating,
                            connector_at_transmitter=f.connector_at_transmitter,
                            connector_at_antenna=f.connector_at_antenna, balun=balun, tuner=tuner,
                            exact_complex_z0=station.exact_line_loss, field=f"configurations[{index}]")


def _configuration(loaded: LoadedStation, i: int, c: Configuration, ground_factor: float, maps: bool = True,
                   lean: bool = False):
    """One configuration's result and :class:`Emitter`.

    ``lean`` leaves out what no place's exposure reads (a wire antenna's shell search for its compliance
    distances, its lumped loads and its feedline-shield choke search): for :func:`place_totals`.
    """
    st = loaded.model
    tx = next(t for t in st.transmitters if t.id == c.transmitter)
    fline = next(f for f in st.feedlines if f.id == c.feedline)
    ant = next(a for a in st.antennas if a.id == c.antenna)
    freq_hz = c.freq_mhz * 1e6
    mode = mode_duty_factor(c.mode, field=f"configurations[{i}].mode")
    duty = c.duty_factor if c.duty_factor is not None else mode.duty_factor
    duty_src = "declared in the station file" if c.duty_factor is not None else mode.source
    duty_ver = ("not confirmed (declared in the station file, not a published figure)"
                if c.duty_factor is not None else mode.verification)
    on = c.schedule.on_minutes if c.schedule else None
    off = c.schedule.off_minutes if c.schedule else None

    limits = {env: limits_at(st.standard, freq_hz, env, field=f"configurations[{i}].freq_mhz")
              for env in ENVIRONMENTS}
    averaging = {}
    fraction = {}
    avg_tx = {}
    for env in ENVIRONMENTS:
        timed = [lim.averaging_minutes for lim in limits[env] if lim.averaging_minutes]
        minutes = min(timed) if timed else None     # shortest window: largest fill (conservative)
        averaging[env] = minutes
        fraction[env] = window_fill(on, off, minutes) if minutes else 1.0
        avg_tx[env] = average_power_w(tx.pep_w, duty, fraction[env])

    flags: list[str] = []
    if c.swr is None and c.load_r_ohm is None:
        flags.append("no SWR or load declared: a matched load (SWR 1) is assumed, which gives the "
                     "largest power at the antenna but understates line stress")
    line = _line_result(st, i, c, fline, tx.pep_w, tx.pep_w * duty)
    if line.total_loss_db > MAX_LINE_LOSS_DB:
        raise bad_value(f"configurations[{i}]", c.id,
                        f"loses {line.total_loss_db:.3g} dB in feedline {fline.id!r} (accepted: at most "
                        f"{MAX_LINE_LOSS_DB:g} dB; beyond it the exposure would rest on an implausible loss): check "
                        "freq_mhz (in MHz), the feedline's length_m (in metres) and its cable class")
    loss_fraction = float(line.loss_fraction)
    solution = _wire_solution(loaded, ant, freq_hz)
    twin = _ground_bound_solution(loaded, ant, solution, freq_hz)
    gain, gain_src = peak_gain_dbi(ant, solution.gain_dbi if solution is not None else None,
                                   loaded.pattern_tables.get(ant.id))
    if ant.kind == "quarter-wave-vertical" and ground_factor > 1:
        flags.append("quarter-wave vertical: its 5.16 dBi model gain already holds a perfect ground image, so "
                     f"applying F = {ground_factor:g} as well overstates the far field (conservative, up to 6 dB)")
    declared_factor = ground_factor
    if solution is not None and solution.ground == "perfect" and gain_src == "moment-method solver":
        # The solver's gain over a perfect ground already holds the reflected wave (image):
        # applying F again would count the ground twice.
        ground_factor = 1.0
        flags.append("wire antenna over a perfect ground: the solver's gain includes the ground reflection, "
                     "so the far-field estimate uses F = 1 with it")
    if solution is not None and solution.ground == "real" and gain_src == "moment-method solver":
        # The solver's gain over real soil holds the Fresnel-reflected space wave: F would count it twice.
        ground_factor = 1.0
        soil = solution.ground_method.split(": near fields")[0]
        flags.append(f"wire antenna over {soil}: near fields from the Sommerfeld integrals (at places with every "
                     "part of the antenna at a Norton numerical distance of 200 or more, never within 15 wavelengths, "
                     "from the reflection-coefficient approximation, within 0.6 % of the image field) and "
                     "gain from the space wave with Fresnel coefficients (ground reflection included, F = 1); this "
                     "replaces the bound of free space and perfect ground")
        gw = solution.ground_wave_bound_gain_dbi
        if gw is not None and gw > gain:
            # Along the ground the far field is Norton's ground wave, which the space-wave gain leaves out;
            # the same currents with a perfect-ground image bound it (|F(w)| <= 1).
            flags.append(f"far-field gain {gw:.2f} dBi instead of the space-wave peak {gain:.2f} dBi: the ground "
                         "wave along the soil is bounded by the same currents over a perfect ground")
            gain, gain_src = gw, "moment-method solver over real ground, ground-wave bound"
    if twin is not None and gain_src == "moment-method solver":
        # Far field of the bound: the larger of G F (free space) and G (over perfect ground, reflection included).
        if twin.ground == "perfect":
            if twin.gain_dbi > gain + 10 * math.log10(ground_factor):
                gain, gain_src, ground_factor = twin.gain_dbi, "moment-method solver over perfect ground (bound)", 1.0
        elif twin.gain_dbi + 10 * math.log10(declared_factor) > gain:
            gain, gain_src = twin.gain_dbi, "moment-method solver in free space with F (bound)"
            ground_factor = declared_factor
        flags.append(f"wire antenna declared over {solution.ground}: solved over free space and over a perfect "
                     f"ground, the worse governs at every place ({WIRE_GROUND_BOUND}; real soil lies between the "
                     "two; declare ground = \"real\" with its soil to model it instead)")
    avg_ant = {env: avg_tx[env] * loss_fraction for env in ENVIRONMENTS}
    pep_ant = tx.pep_w * loss_fraction
    eirp = {env: float(eirp_w(avg_ant[env], gain)) for env in ENVIRONMENTS}
    erp = {env: float(erp_w(avg_ant[env], gain)) for env in ENVIRONMENTS}
    eirp_pep = float(eirp_w(pep_ant, gain))
    nf = float(ex.near_field_distance_m(freq_hz))
    ap = float(ex.aperture_far_field_distance_m(ant.aperture_m, freq_hz)) if ant.aperture_m else None
    if solution is not None:   # 2 D^2 / lambda of the wire structure itself, from any part of it
        ap = max(ap or 0.0, _wire_near_field_boundary_m(solution))
    flag_dist = max(nf, ap or 0.0)
    from rfsafe.antenna.extent import antenna_extent

    extent = antenna_extent(ant, freq_hz, loaded.wire_specs.get(ant.id))
    cd_basis = f"from the nearest part of the antenna: {extent.basis}"
    if not extent.known:
        flags.append(f"antenna {ant.id}: {extent.basis}")

    distances = []
    every_limit = []
    for env in ENVIRONMENTS:
        best = None
        for lim in limits[env]:
            p = _power_for(lim, eirp[env], eirp_pep)
            d = ex.compliance_distance_m(p, ground_factor, lim)
            every_limit.append(ComplianceDistance(
                environment=env, environment_label=lim.environment_label, dist_m=d, dist_ft=d / M_PER_FT,
                limit_basis=lim.basis, governing=_governing(lim, ex.far_field_power_density_w_m2(
                    p, max(d, 1e-9), ground_factor)), averaging_minutes=lim.averaging_minutes, eirp_w=p,
                inside_near_field=d < flag_dist, limit_source=lim.source, **_limit_values(lim),
                distance_basis=cd_basis))
            if best is None or d > best[0]:
                best = (d, lim, p)
        d, lim, p = best
        gov = _governing(lim, ex.far_field_power_density_w_m2(p, max(d, 1e-9), ground_factor))
        distances.append(ComplianceDistance(
            environment=env, environment_label=lim.environment_label, dist_m=d, dist_ft=d / M_PER_FT,
            limit_basis=lim.basis, governing=gov, averaging_minutes=lim.averaging_minutes, eirp_w=p,
            inside_near_field=d < flag_dist, limit_source=lim.source,
            **_limit_values(lim), distance_basis=cd_basis))
        if d < flag_dist and solution is None:   # wire antennas: the solver decides (below)
            flags.append(f"{env} compliance distance {d:.2f} m (from the nearest part of {ant.id}) lies inside the "
                         f"near-field boundary "
                         f"{flag_dist:.2f} m: {NEAR_FIELD_FLAG}")
    if solution is not None and not lean:
        sols = [x for x in (solution, twin) if x is not None]
        distances, wire_flags = _wire_compliance_distances(sols, limits, avg_ant, pep_ant, distances, flag_dist)
        flags.extend(wire_flags)
    loads = () if lean else _wire_loads(solution, pep_ant)
    shield = None if lean else _feedline_shield(loaded, ant, solution, limits, avg_ant, pep_ant, nf, twin=twin)
    exceeded = tuple(line.exceeded_parts) + tuple(
        f"lumped load {ld.label!r} on {ant.id} ({ld.voltage_v_peak:.4g} V peak at the PEP, rated "
        f"{ld.voltage_rating_v_peak:g} V peak)" for ld in loads if ld.voltage_headroom is not None
        and ld.voltage_headroom < 1)
    from rfsafe.antenna.wire.solver import power_basis_flag

    basis = power_basis_flag((solution, twin))
    if basis is not None:
        flags.append(basis)
    if any(ld.voltage_rating_v_peak is None for ld in loads):
        flags.append("lumped loads without voltage_rating_v_peak are not rated: their peak voltage at the PEP "
                     "is shown but not compared")
    if shield is not None:
        flags.append(f"feedline shield modelled as a conductor: largest common-mode current "
                     f"{shield.max_current_a_rms:.3g} A rms at the PEP ({shield.max_at_distance_m:.3g} m from the feed "
                     f"point); choke needed near the route: " + (
                         "none" if shield.required_choke_ohm == 0 else "not reachable by a choke"
                         if shield.required_choke_ohm is None else f"|Z| >= {shield.required_choke_ohm:.3g} ohm"))
    result = ConfigurationResult(
        loads=loads, feedline_shield=shield,
        id=c.id, description=c.description, freq_mhz=c.freq_mhz, transmitter=tx.id, feedline=fline.id,
        antenna=ant.id, mode=c.mode, pep_w=tx.pep_w, duty_factor=duty, duty_factor_source=duty_src,
        duty_factor_verification=duty_ver,
        schedule=_schedule_text(c), transmit_fraction=fraction, averaging_minutes=averaging,
        avg_power_w=avg_tx, line_loss_db=float(line.total_loss_db), loss_fraction=loss_fraction,
        avg_power_at_antenna_w=avg_ant, pep_at_antenna_w=pep_ant, gain_dbi=gain, gain_source=gain_src,
        eirp_w=eirp, erp_w=erp, eirp_pep_w=eirp_pep, near_field_distance_m=nf, aperture_far_field_m=ap,
        compliance_distances=tuple(distances), line=line, exceeded_parts=exceeded, flags=tuple(flags),
        method="far-field prediction S = EIRP F / (4 pi R^2), peak gain (OET Bulletin 65, section 2)"
               + ("; near field of the wire antenna by the moment-method solver" if solution is not None else "")
               + (f" ({WIRE_GROUND_BOUND})" if twin is not None else "")
               + (" over real ground (Sommerfeld integrals, soil as declared; replaces the bound of free space "
                  "and perfect ground)" if solution is not None and solution.ground == "real" else ""),
        wire=_wire_summary(solution),
        near_field_map=_near_field_map(c.id, ant, solution, limits, avg_ant, pep_ant, loaded, twin) if maps else None,
        limit_distances=tuple(every_limit))
    emitter = Emitter(configuration=c.id, transmitter=tx.id, freq_hz=freq_hz, x_m=ant.x_m, y_m=ant.y_m,
                      height_m=ant.height_m, antenna=ant, peak_gain_dbi=gain, avg_power_at_antenna_w=avg_ant,
                      pep_at_antenna_w=pep_ant, eirp_w=eirp, eirp_pep_w=eirp_pep, limits=limits,
                      ground_factor=ground_factor, solution=solution, extent=extent, ground_bound_solution=twin)
    return result, emitter


def _power_for(limit, avg_w: float, pep_w: float) -> float:
    """The power a limit is compared with: PEP for instantaneous limits, else the time average."""
    return pep_w if limit.basis == "instantaneous" else avg_w


def _limit_values(limit) -> dict:
    return {"power_density_limit_w_m2": limit.power_density_w_m2, "e_field_limit_v_m": limit.e_field_v_m,
            "h_field_limit_a_m": limit.h_field_a_m, "limit_verification": limit.verification}


def _governing(limit, s_w_m2) -> str:
    """Name of the quantity that gives the largest ratio under a plane-wave relation."""
    e, h = ex.plane_wave_fields(s_w_m2)
    cand = []
    if limit.power_density_w_m2 is not None:
        cand.append((s_w_m2 / limit.power_density_w_m2, "power_density"))
    if limit.e_field_v_m is not None:
        cand.append(((e / limit.e_field_v_m) ** 2, "e_field"))
    if limit.h_field_a_m is not None:
        cand.append(((h / limit.h_field_a_m) ** 2, "h_field"))
    return max(cand)[1]


def _gain_toward(em: Emitter, loaded: LoadedStation, dx, dy, dz) -> tuple[float, str]:
    ant = em.antenna
    if not ant.use_pattern:
        return em.peak_gain_dbi, "peak"
    from rfsafe.antenna import patterns

    index = next(k for k, a in enumerate(loaded.model.antennas) if a.id == ant.id)
    direction = patterns.direction_in_antenna_frame(dx, dy, dz, azimuth_deg=ant.azimuth_deg,
                                                    tilt_deg=ant.tilt_deg, polarisation=ant.polarisation)
    g = patterns.pattern_gain_dbi(ant.kind, *direction, peak_gain_dbi=em.peak_gain_dbi,
                                  front_to_back_db=ant.front_to_back_db, beamwidth_h_deg=ant.beamwidth_h_deg,
                                  beamwidth_v_deg=ant.beamwidth_v_deg, table=loaded.pattern_tables.get(ant.id),
                                  field=f"antennas[{index}]")
    if ant.kind == "beam":
        lobe = patterns.beam_gain(direction, peak_gain_dbi=em.peak_gain_dbi, front_to_back_db=ant.front_to_back_db,
                                  beamwidth_h_deg=ant.beamwidth_h_deg, beamwidth_v_deg=ant.beamwidth_v_deg,
                                  downward_floor=False)
        if 10.0 ** (float(np.asarray(g)) / 10.0) > float(lobe) * (1 + 1e-9):
            return float(np.asarray(g)), "pattern, downward floor governs: " + patterns.DOWNWARD_FLOOR_TEXT
    return float(np.asarray(g)), "pattern"


def _heights(place) -> list[float]:
    return list(place.body_heights_m) if place.body_heights_m else [place.height_m]


#: Smallest distance used in the far-field formula [m]: a place on (or inside the assumed envelope of)
#: an antenna gets a finite, very large ratio instead of a division by zero.
MIN_FAR_FIELD_DIST_M = 0.01


def _structure_distance_m(em: Emitter, place, z_m: float) -> float:
    """Distance [m] from a point of a place to the nearest part of the emitter's radiating structure."""
    from rfsafe.antenna.extent import nearest_distance_m

    return float(nearest_distance_m(em.extent, np.array([place.x_m, place.y_m, z_m], dtype=float)))


def _far_field_at(em: Emitter, loaded: LoadedStation, place, z_m: float, peak_only: bool = False,
                  structure_dist_m: float | None = None):
    """Worst far-field (ratio, limit, S, dist, gain, how) at one evaluation height.

    R is the distance to the nearest part of the radiating structure (never more than the distance to
    its centre, so never optimistic; ``structure_dist_m`` when already known); the gain is taken toward
    the place from the declared position.
    """
    dx, dy, dz = place.x_m - em.x_m, place.y_m - em.y_m, z_m - em.height_m
    if structure_dist_m is None:
        structure_dist_m = _structure_distance_m(em, place, z_m)
    dist = max(structure_dist_m, MIN_FAR_FIELD_DIST_M)
    if peak_only:
        gain, how = em.peak_gain_dbi, "peak (pattern not used inside the near field)"
    else:
        gain, how = _gain_toward(em, loaded, dx, dy, dz)
    best = None
    for lim in em.limits[place.environment]:
        p_ant = _power_for(lim, em.avg_power_at_antenna_w[place.environment], em.pep_at_antenna_w)
        s = float(ex.far_field_power_density_w_m2(eirp_w(p_ant, gain), dist, em.ground_factor))
        r = float(ex.ratio_at(lim, s))
        if best is None or r > best[0]:
            best = (r, lim, s, dist, gain, how)
    return best


#: Standards whose whole-body reference levels may be compared with fields spatially averaged over the
#: body (all five, from memory: OET Bulletin 65 section 2 and its spatial-averaging discussion; ICNIRP 2020
#: and 1998 whole-body reference levels; IEEE C95.1-2019 spatial averaging of exposure reference levels;
#: Safety Code 6 (2015) spatially averaged reference levels).
SPATIAL_AVERAGE_ALLOWED = {"fcc": True, "icnirp2020": True, "icnirp1998": True, "ieee2019": True, "sc6": True,
                           "eu1999": True}


def _near_field_at(em: Emitter, solution, place, heights, field: str, average: bool = False):
    """Moment-method (ratio, limit, E, H, z) at a place: worst height, or the body-height spatial average.

    The spatial average is the rms over the heights, sqrt(mean(E^2)) and sqrt(mean(H^2)), so that the
    averaged quantity is the equivalent power density; ``z`` is then None.
    """
    from rfsafe.limits import exposure_ratio

    pts = np.array([[place.x_m, place.y_m, z] for z in heights], dtype=float)
    best = None
    for lim in em.limits[place.environment]:
        p_ant = _power_for(lim, em.avg_power_at_antenna_w[place.environment], em.pep_at_antenna_w)
        e, h = solution.fields_rms(pts, p_ant, field=field)
        if average and lim.basis != "instantaneous":   # instantaneous limits are never averaged
            e, h = np.sqrt(np.mean(e ** 2, keepdims=True)), np.sqrt(np.mean(h ** 2, keepdims=True))
            r = np.asarray(exposure_ratio(lim, e_field_v_m=e, h_field_a_m=h), dtype=float).reshape(1)
            if best is None or r[0] > best[0]:
                best = (float(r[0]), lim, float(e[0]), float(h[0]), None)
            continue
        r = np.asarray(exposure_ratio(lim, e_field_v_m=e, h_field_a_m=h), dtype=float)
        k = int(np.argmax(r))
        if best is None or r[k] > best[0]:
            best = (float(r[k]), lim, float(e[k]), float(h[k]), heights[k])
    return best


def _place_exposure(em: Emitter, loaded: LoadedStation, p_index: int, place, cres: ConfigurationResult,
                    solution=None):
    if solution is not None:
        return _wire_place_exposure(em, loaded, p_index, place, cres)
    from rfsafe.antenna.extent import nearest_distance_m

    heights = _heights(place)  # the loader has refused places on an antenna
    # distances to the nearest part of the structure, every height at once (the same numbers one by one)
    raw = [float(d) for d in nearest_distance_m(em.extent, np.array([[place.x_m, place.y_m, z] for z in heights],
                                                                    dtype=float))]
    r, lim, s, dist, gain, how = max((_far_field_at(em, loaded, place, z, structure_dist_m=d)
                                      for z, d in zip(heights, raw)), key=lambda b: b[0])
    e, h = (float(v) for v in ex.plane_wave_fields(s))
    flag_dist = max(cres.near_field_distance_m, cres.aperture_far_field_m or 0.0)
    dist_min = min(raw)
    inside = dist_min < flag_dist
    if inside and solution is None and em.antenna.use_pattern:
        # a far-field pattern's nulls do not hold near the antenna: its peak gain is taken there
        r, lim, s, dist, gain, how = max((_far_field_at(em, loaded, place, z, peak_only=True, structure_dist_m=d)
                                          for z, d in zip(heights, raw)), key=lambda b: b[0])
        e, h = (float(v) for v in ex.plane_wave_fields(s))
    basis = f"{em.antenna.id}: {em.extent.basis}"
    governing = f"{_governing(lim, s)} ({lim.basis})"
    flags = (f"{dist_min:.2f} m from {em.antenna.id} is inside the near-field boundary {flag_dist:.2f} m: "
             f"{NEAR_FIELD_FLAG}",) if inside else ()
    if "downward floor" in how:
        flags += (f"place {place.label!r} lies below beam {em.antenna.id}: gain {gain:.2f} dBi from the stated "
                  "downward floor (1/2 of the peak gain x sin^2 of the depression), not the front-to-back floor",)
    return PlaceExposure(
        configuration=em.configuration, transmitter=em.transmitter, dist_m=dist, gain_dbi=gain, gain_method=how,
        power_density_w_m2=s, e_field_v_m=e, h_field_a_m=h, exposure_ratio=r, governing=governing,
        margin_db=float(ex.margin_db(r)), method="far-field estimate", inside_near_field=inside, flags=flags,
        far_field_ratio=r, limit_source=lim.source, **_limit_values(lim), distance_basis=basis)


def place_ratios(em: Emitter, loaded: LoadedStation, cres: ConfigurationResult, environment: str, xs, ys,
                 heights) -> np.ndarray:
    """Exposure ratio [1] of one configuration at many places (x, y) with the same heights and environment.

    Each value is the ``exposure_ratio`` that :func:`_place_exposure` gives for that place (the same
    functions on the same numbers, elementwise), computed for all places together: one nearest-part
    distance and one pattern evaluation for every point, and for a wire antenna one near-field
    computation per solution. ``inf`` where a place lies on or inside a conductor (the evaluation
    refuses such a place). Used by the ground-level keep-out search (:mod:`rfsafe.remedies`).
    """
    xs = np.asarray(xs, dtype=float).ravel()
    ys = np.asarray(ys, dtype=float).ravel()
    hz = np.asarray(heights, dtype=float)
    n, nh = len(xs), len(hz)
    pts = np.column_stack([np.repeat(xs, nh), np.repeat(ys, nh), np.tile(hz, n)])
    if em.solution is not None:
        return _wire_place_ratios(em, loaded, cres, environment, pts, list(heights))
    limits = em.limits[environment]
    dist_raw, g = _kept((em.extent, loaded.pattern_tables.get(em.antenna.id)),
                        ("far field", em.peak_gain_dbi, pts.shape, pts.tobytes()),
                        lambda: _far_field_geometry(em, loaded, pts), len(pts))
    dist = np.maximum(dist_raw, MIN_FAR_FIELD_DIST_M)
    ant = em.antenna

    def ratios(gains) -> np.ndarray:
        best = np.full(len(pts), -np.inf)
        for lim in limits:
            p_ant = _power_for(lim, em.avg_power_at_antenna_w[environment], em.pep_at_antenna_w)
            eirp = np.array([eirp_w(p_ant, g) for g in gains.tolist()])   # Python floats, as per place
            r = np.asarray(ex.ratio_at(lim, ex.far_field_power_density_w_m2(eirp, dist, em.ground_factor)), dtype=float)
            best = np.where(r > best, r, best)
        return best.reshape(n, nh).max(axis=1)

    if not ant.use_pattern:
        return ratios(np.full(len(pts), em.peak_gain_dbi))
    out = ratios(np.broadcast_to(np.asarray(g, dtype=float), (len(pts),)))
    # a far-field pattern's nulls do not hold near the antenna: its peak gain is taken there
    inside = dist_raw.reshape(n, nh).min(axis=1) < max(cres.near_field_distance_m, cres.aperture_far_field_m or 0.0)
    if np.any(inside):
        out = np.where(inside, ratios(np.full(len(pts), em.peak_gain_dbi)), out)
    return out


def _far_field_geometry(em: Emitter, loaded: LoadedStation, pts: np.ndarray):
    """Distances [m] from points (N, 3) to the nearest part of the emitter's structure, and its pattern gain
    toward them [dBi] (None when the antenna uses its peak gain): what :func:`place_ratios` computes that no
    power, duty factor, schedule or line loss changes."""
    from rfsafe.antenna.extent import nearest_distance_m

    dist_raw = nearest_distance_m(em.extent, pts)
    ant = em.antenna
    if not ant.use_pattern:
        return dist_raw, None
    from rfsafe.antenna import patterns

    index = next(k for k, a in enumerate(loaded.model.antennas) if a.id == ant.id)
    direction = patterns.direction_in_antenna_frame(pts[:, 0] - em.x_m, pts[:, 1] - em.y_m, pts[:, 2] - em.height_m,
                                                    azimuth_deg=ant.azimuth_deg, tilt_deg=ant.tilt_deg,
                                                    polarisation=ant.polarisation)
    g = patterns.pattern_gain_dbi(ant.kind, *direction, peak_gain_dbi=em.peak_gain_dbi,
                                  front_to_back_db=ant.front_to_back_db, beamwidth_h_deg=ant.beamwidth_h_deg,
                                  beamwidth_v_deg=ant.beamwidth_v_deg, table=loaded.pattern_tables.get(ant.id),
                                  field=f"antennas[{index}]")
    return dist_raw, g


#: Point geometry kept between evaluations (see :func:`_kept`): at most this many points in all.
_KEPT_POINTS = 200_000
_kept_values: dict = {}


def _kept(owners: tuple, key: tuple, compute, points: int):
    """``compute()``, kept under ``key`` and the identity of ``owners`` (objects never changed after they are
    made: an antenna's extent, its pattern table, a wire solution), their read-only arrays handed out again.

    The remedies evaluate the same places against the same structures many times with only a power, a duty
    factor, a schedule or a line loss changed (extents and wire solutions are shared per antenna and
    frequency): their distances, gains and wire distances are the same numbers each time. An entry holds
    its owners, so their ids are not reused while it exists; the oldest entries go first beyond
    :data:`_KEPT_POINTS` points.
    """
    full = (tuple(id(o) for o in owners), key)
    hit = _kept_values.get(full)
    if hit is not None:
        return hit[1]
    value = compute()
    for a in (value if isinstance(value, tuple) else (value,)):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    _kept_values[full] = (owners, value, points)
    _kept_values["points"] = _kept_values.get("points", 0) + points
    while _kept_values["points"] > _KEPT_POINTS and len(_kept_values) > 2:   # oldest first
        old = next(k for k in _kept_values if k != "points" and k != full)
        _kept_values["points"] -= _kept_values.pop(old)[2]
    return value


def _wire_place_ratios(em: Emitter, loaded: LoadedStation, cres: ConfigurationResult, env: str, pts: np.ndarray,
                       heights: list[float]) -> np.ndarray:
    """:func:`place_ratios` for a wire antenna (see :func:`_wire_place_exposure`, whose arithmetic it repeats)."""
    from rfsafe.antenna.wire.solver import unit_fields_together
    from rfsafe.limits import exposure_ratio

    nh = len(heights)
    n = len(pts) // nh
    field = "keep-out search point"
    sols = _wire_solutions(em)
    point_dist = _wire_distance_m(em.solution, pts)
    if n > 1:   # places next to a wire, which the solver may refuse, apart (only a shortcut: any refusal is handled)
        near = (point_dist < 3.0 * (1 + 1e-6) * float(em.solution.structure.radius_m.max())).reshape(n, nh).any(axis=1)
        if np.any(near) and not np.all(near):
            out = np.empty(n)
            for part in (np.flatnonzero(~near), *np.flatnonzero(near)[:, None]):
                sel = (part[:, None] * nh + np.arange(nh)).ravel()
                out[part] = _wire_place_ratios(em, loaded, cres, env, pts[sel], heights)
            return out
    try:
        # the unit-power fields, kept by the solution (the solutions of one geometry together, the same numbers);
        # points on a conductor are refused
        unit_fields_together(sols, pts, field=field)
        for sol in sols:
            sol.fields_phasor(pts, 1.0, field=field)   # (the check and the kept fields; no rms wanted here)
    except InputError:   # some place on or next to a conductor (refused: counts as exceeding); halve and retry
        if n == 1:
            return np.array([math.inf])
        half = (n // 2) * nh
        return np.concatenate([_wire_place_ratios(em, loaded, cres, env, pts[:half], heights),
                               _wire_place_ratios(em, loaded, cres, env, pts[half:], heights)])
    dist = point_dist.reshape(n, nh).min(axis=1)
    inside = dist < max(cres.near_field_distance_m, cres.aperture_far_field_m or 0.0)
    r_ff = np.full(n, -np.inf)
    for lim in em.limits[env]:
        p_ant = _power_for(lim, em.avg_power_at_antenna_w[env], em.pep_at_antenna_w)
        s = ex.far_field_power_density_w_m2(eirp_w(p_ant, em.peak_gain_dbi), np.maximum(dist, 1e-9), em.ground_factor)
        r = np.asarray(ex.ratio_at(lim, s), dtype=float)
        r_ff = np.where(r > r_ff, r, r_ff)
    average = loaded.model.near_field_spatial_average and SPATIAL_AVERAGE_ALLOWED[loaded.model.standard]
    rn = np.full(n, -np.inf)
    for sol in sols:
        for lim in em.limits[env]:
            p_ant = _power_for(lim, em.avg_power_at_antenna_w[env], em.pep_at_antenna_w)
            e, h = (v.reshape(n, nh) for v in sol.fields_rms(pts, p_ant, field=field))
            if average and lim.basis != "instantaneous":
                e, h = np.sqrt(np.mean(e ** 2, axis=1)), np.sqrt(np.mean(h ** 2, axis=1))
                r = np.asarray(exposure_ratio(lim, e_field_v_m=e, h_field_a_m=h), dtype=float)
            else:
                r = np.asarray(exposure_ratio(lim, e_field_v_m=e, h_field_a_m=h), dtype=float).max(axis=1)
            rn = np.where(r > rn, r, rn)
    return np.where(inside | (rn > r_ff), rn, r_ff)


# --- Wire antennas: nearest-point distances, the ground bound, solver near every part of the wire ---

#: Short text for results: from where a wire antenna's distances are measured (the solved segments).
WIRE_DISTANCE_BASIS = "nearest point of the solved wire geometry"
#: Method label of a wire antenna declared over free space in a station file (see _ground_bound_solution).
WIRE_GROUND_BOUND = "worse of free space and perfect ground (bound)"


def _ground_bound_solution(loaded: LoadedStation, ant: Antenna, solution, freq_hz: float):
    """The same wire antenna over the other idealised ground: a perfect ground when it is declared over
    free space, free space when it is declared over a perfect ground without touching it (else None).

    Criterion (conservative, always): in a station file z is the height above the real ground, so every
    wire antenna has the ground below it and every person stands on it. Real soil reflects between
    nothing (free space) and everything (a perfect conductor, image theory: Balanis, Antenna Theory,
    3rd ed., Sec. 4.7); unless the soil is declared, both are solved and at every place the worse
    governs, labelled as a bound. A wire declared over a perfect ground gets the same bound unless it
    touches the ground (a ground-fed antenna, whose ground is part of it); a wire declared with
    ``ground = "real"`` (with its soil: Sommerfeld integrals, ``rfsafe.antenna.wire.ground``) is solved as
    declared, without the bound.
    """
    if solution is None:
        return None
    declared = loaded.wire_specs[ant.id].ground
    if declared == "perfect" and solution.structure.ground_nodes:
        return None   # fed against the ground: the ground is part of the antenna; free space is no bound
    if declared not in ("free-space", "perfect"):
        return None
    other = "perfect" if declared == "free-space" else "free-space"
    from rfsafe.antenna.wire.solver import solve_shared as solve   # shared per antenna and frequency

    index = next(k for k, a in enumerate(loaded.model.antennas) if a.id == ant.id)
    spec = loaded.wire_specs[ant.id]
    prefix = f"antennas[{index}].wire."
    for j, w in enumerate(spec.wires):
        for k, p in enumerate(w.points_m):
            if p[2] < 0:
                raise bad_value(f"{prefix}wires[{j}].points_m[{k}]", p,
                                "is below ground: in a station file z is the height above ground (accepted: z >= 0 m)")
    try:
        return solve(spec.model_copy(update={"ground": other}), freq_hz, field_prefix=prefix)
    except InputError as err:
        raise InputError(f"{err} (a wire antenna declared over {declared} is also solved over {other}, "
                         f"the bound for real soil; declare {prefix}ground = \"real\" with its soil to model the "
                         "ground directly)") from None


def _wire_solutions(em: Emitter) -> list:
    return [s for s in (em.solution, em.ground_bound_solution) if s is not None]


def _wire_distance_m(solution, points: np.ndarray) -> np.ndarray:
    """Distance [m] from each point (N, 3) to the nearest point of the solved wires (shield included); kept
    per segment geometry and points (read-only, see :func:`_kept`): solutions of the same wires at nearby
    frequencies (several bands' configurations, an antenna with and without a choke) often have the same
    segments, and the distances are then the same numbers."""
    from rfsafe.antenna.wire.geometry import point_segment_distances

    st = solution.structure
    pts = np.asarray(points, dtype=float)
    return _kept((), ("wire distance", st.start_m.shape, st.start_m.tobytes(), st.end_m.tobytes(), pts.shape,
                      pts.tobytes()),
                 lambda: point_segment_distances(pts[:, None, :], st.start_m[None], st.end_m[None]).min(axis=1),
                 len(pts))


def _wire_size_m(solution) -> float:
    """Largest dimension D [m] of the radiating wire structure (greatest distance between two nodes), with its
    image over a perfect ground (the currents that radiate, Balanis Sec. 4.7)."""
    from rfsafe.antenna.wire.geometry import unique_rows

    st = solution.structure
    nodes = unique_rows(np.concatenate([st.start_m, st.end_m]))
    if st.ground:
        nodes = np.concatenate([nodes, nodes * np.array([1.0, 1.0, -1.0])])
    return float(max(np.linalg.norm(nodes[i:i + 256, None, :] - nodes[None], axis=-1).max()
                     for i in range(0, len(nodes), 256)))


def _wire_near_field_boundary_m(solution) -> float:
    """2 D^2 / lambda of the wire structure [m] (Balanis Sec. 2.2.4); the boundary is its max with lambda/2pi.
    Kept per solution (see :func:`_kept`): every configuration and trial of the remedies on that antenna and
    frequency asks it again."""
    return _kept((solution,), ("wire near-field boundary",),
                 lambda: float(ex.aperture_far_field_distance_m(_wire_size_m(solution), solution.freq_hz)), 0)


def _wire_near_field_at(em: Emitter, place, heights, field: str, average: bool):
    """Moment-method result at a place, worst over the solutions (declared and ground bound)."""
    from rfsafe.antenna.wire.solver import unit_fields_together

    best, which = None, ""
    # their unit fields at the place together (one geometry: the same numbers, see _near_field_at's points)
    unit_fields_together(_wire_solutions(em), np.array([[place.x_m, place.y_m, z] for z in heights], dtype=float),
                         field=field)
    for sol in _wire_solutions(em):
        r = _near_field_at(em, sol, place, heights, field, average)
        if best is None or r[0] > best[0]:
            best, which = r, sol.ground
    return best, which


def _wire_place_exposure(em: Emitter, loaded: LoadedStation, p_index: int, place, cres: ConfigurationResult):
    """Exposure at a place from a wire antenna, judged by its distance to the nearest point of the wires.

    Within the near-field boundary max(lambda/2pi, 2D^2/lambda) of any part of the wires the moment-method
    fields govern. Beyond it the far-field estimate (peak gain, ground factor, distance to the nearest point
    of the wires) is used, but never below the solver's own value there.
    """
    heights = _heights(place)  # the loader has refused places on an antenna
    pts = np.array([[place.x_m, place.y_m, z] for z in heights], dtype=float)
    dist = float(_wire_distance_m(em.solution, pts).min())
    boundary = max(cres.near_field_distance_m, cres.aperture_far_field_m or 0.0)
    inside = dist < boundary
    bound = em.ground_bound_solution is not None
    env = place.environment
    best_ff = None
    for lim in em.limits[env]:
        p_ant = _power_for(lim, em.avg_power_at_antenna_w[env], em.pep_at_antenna_w)
        s = float(ex.far_field_power_density_w_m2(eirp_w(p_ant, em.peak_gain_dbi), max(dist, 1e-9), em.ground_factor))
        r = float(ex.ratio_at(lim, s))
        if best_ff is None or r > best_ff[0]:
            best_ff = (r, lim, s)
    r_ff, lim_ff, s_ff = best_ff
    average = loaded.model.near_field_spatial_average and SPATIAL_AVERAGE_ALLOWED[loaded.model.standard]
    (rn, limn, en, hn, zn), ground = _wire_near_field_at(em, place, heights, f"places[{p_index}].body_heights_m",
                                                         average)
    solver_how = "moment method" + (f", {WIRE_GROUND_BOUND}" if bound else "") + (
        ", real ground (Sommerfeld)" if em.solution.ground == "real" else "") + (
        ", spatial average over body heights" if zn is None else "")
    common = dict(configuration=em.configuration, transmitter=em.transmitter, dist_m=dist, gain_dbi=em.peak_gain_dbi,
                  gain_method="peak", inside_near_field=inside, far_field_ratio=r_ff, near_field_ratio=rn,
                  distance_basis=f"{em.antenna.id}: {WIRE_DISTANCE_BASIS}"
                  + (" (feedline shield included)" if em.solution.shield is not None else ""))
    where = f"{dist:.2f} m from the nearest point of {em.antenna.id}'s wires"
    avg_note = (f"; spatial average over body heights {', '.join(f'{z:g}' for z in heights)} m, as the standard "
                "allows (option near_field_spatial_average)" if zn is None else "")
    bound_note = (f"; {WIRE_GROUND_BOUND}: the {ground} model governs here" if bound else "")
    if inside or rn > r_ff:
        e_part = (en / limn.e_field_v_m) ** 2 if limn.e_field_v_m else 0.0
        h_part = (hn / limn.h_field_a_m) ** 2 if limn.h_field_a_m else 0.0
        diff_db = 10 * math.log10(rn / r_ff) if rn > 0 and r_ff > 0 else float("nan")
        why = ("inside the near-field boundary" if inside else
               "outside the near-field boundary, but the moment-method value is above the far-field estimate")
        flags = (f"{where} is {why} {boundary:.2f} m: evaluated with the moment-method solver (near field "
                 f"governs; far-field estimate {r_ff:.3g}, near-field {rn:.3g}, {diff_db:+.1f} dB)"
                 + bound_note + avg_note,)
        return PlaceExposure(
            **common, power_density_w_m2=max(en ** 2 / ex.ETA_STANDARDS_OHM, ex.ETA_STANDARDS_OHM * hn ** 2),
            e_field_v_m=en, h_field_a_m=hn, exposure_ratio=rn,
            governing=f"{'e_field' if e_part >= h_part else 'h_field'} ({limn.basis})",
            margin_db=float(ex.margin_db(rn)), method=f"near-field ({solver_how})", flags=flags,
            limit_source=limn.source, **_limit_values(limn))
    e, h = (float(v) for v in ex.plane_wave_fields(s_ff))
    return PlaceExposure(
        **common, power_density_w_m2=s_ff, e_field_v_m=e, h_field_a_m=h, exposure_ratio=r_ff,
        governing=f"{_governing(lim_ff, s_ff)} ({lim_ff.basis})", margin_db=float(ex.margin_db(r_ff)),
        method="far-field estimate (>= moment method)", flags=(), limit_source=lim_ff.source,
        **_limit_values(lim_ff))


#: Directions sampled around each node of a wire when searching a compliance distance (cube faces,
#: edges and corners).
_SHELL_DIRECTIONS = np.array([(x, y, z) for x in (-1, 0, 1) for y in (-1, 0, 1) for z in (-1, 0, 1)
                              if (x, y, z) != (0, 0, 0)], dtype=float)
_SHELL_DIRECTIONS /= np.linalg.norm(_SHELL_DIRECTIONS, axis=1)[:, None]
#: Nodes of the wires used as shell centres (evenly spread over the structure).
_SHELL_NODES = 24


def _wire_shell_points(sols, r_m: float, nodes: np.ndarray) -> np.ndarray:
    """Points r_m from the wires (z >= 0) around the shell centres ``nodes``.

    Those at least 0.999 r_m from every segment are kept. The distances to the wires' straight runs decide
    it (few runs, many segments); only when some point lies within their rounding tolerance of 0.999 r_m
    are the segment distances of :func:`_wire_distance_m` computed (the same selection either way).
    """
    from rfsafe.antenna.wire.fields import nearest_run_distance_m

    pts = (nodes[:, None, :] + r_m * _SHELL_DIRECTIONS[None]).reshape(-1, 3)
    limit = 0.999 * r_m
    d_run, tol = nearest_run_distance_m(sols[0].structure, pts)
    tol += 1e-9 * limit
    if np.any(np.abs(d_run - limit) <= tol):
        return pts[(pts[:, 2] >= 0) & (_wire_distance_m(sols[0], pts) >= limit)]
    return pts[(pts[:, 2] >= 0) & (d_run >= limit)]


def _wire_shell_fields(sols, r_m: float, nodes: np.ndarray) -> list:
    """RMS E and H at 1 W [V/m, A/m] at points r_m from the wires (z >= 0), one pair per solution."""
    pts = _wire_shell_points(sols, r_m, nodes)
    return [sol.fields_rms(pts, 1.0, field="compliance distance search") for sol in sols] if len(pts) else []


def _wire_shell_ratio(fields, limits, avg_w: float, pep_w: float) -> float:
    """Largest exposure ratio over shell fields at 1 W (see _wire_shell_fields) for one environment's limits."""
    from rfsafe.limits import exposure_ratio

    worst = 0.0
    for e1, h1 in fields:
        for lim in limits:
            scale = math.sqrt(_power_for(lim, avg_w, pep_w))
            r = np.asarray(exposure_ratio(lim, e_field_v_m=e1 * scale, h_field_a_m=h1 * scale), dtype=float)
            worst = max(worst, float(np.max(r)))
    return worst


def _wire_compliance_distances(sols, limits, avg_ant, pep_ant: float, distances, boundary_m: float):
    """Compliance distances of a wire antenna, from the nearest point of its wires, and their flags.

    Where the far-field distance lies inside the near-field boundary, the moment-method fields are
    sampled on shells around the wires (``_SHELL_NODES`` nodes, 26 directions, above ground) from that
    distance (at least max(5 cm, 5 radii)) out to the boundary. If every sampled ratio is at most 1 the
    far-field distance stands, confirmed; else the distance beyond which the samples are within the
    limit is found by bisection and reported. Never less than the far-field distance (the shells are
    a sample).
    """
    import dataclasses

    from rfsafe.antenna.wire.fields import NEAR_SEGMENT_WAVELENGTHS
    from rfsafe.antenna.wire.geometry import unique_ints, unique_rows
    from rfsafe.antenna.wire.solver import unit_fields_together

    st = sols[0].structure
    if st.length_m.max() > NEAR_SEGMENT_WAVELENGTHS * st.wavelength_m * (1 + 1e-9):
        # the near fields next to segments longer than lambda/20 are not trusted (fields.check_points)
        return distances, [f"{d.environment} compliance distance {d.dist_m:.2f} m lies inside the near-field "
                           f"boundary {boundary_m:.2f} m: {NEAR_FIELD_FLAG} (the solver check needs segments of at "
                           "most lambda/20 on every wire)" for d in distances if d.dist_m < boundary_m]
    nodes = unique_rows(np.concatenate([st.start_m, st.end_m]))
    nodes = nodes[unique_ints(np.linspace(0, len(nodes) - 1, min(_SHELL_NODES, len(nodes))).round().astype(int))]
    r_min = max(0.05, 5 * float(st.radius_m.max()))
    # Shell points per radius and their fields at 1 W per (radius, solution), shared by the environments and
    # computed only when asked: a shell is over the limit as soon as one solution's fields are (the worse of
    # the two governs), so the other solution's fields there are not needed for that answer.
    shells: dict = {}
    fields: dict = {}
    need = [max(r_min, d.dist_m) for d in distances if d.dist_m < boundary_m]
    common = np.geomspace(min(need), boundary_m, 6) if need and r_min < boundary_m else np.array([])
    out, flags = [], []
    for d in distances:
        if d.dist_m >= boundary_m or r_min >= boundary_m:
            out.append(d)
            continue
        env = d.environment

        def over_limit(r_m: float, env: str = env) -> bool:
            if r_m not in shells:
                shells[r_m] = _wire_shell_points(sols, r_m, nodes)
            pts = shells[r_m]
            if not len(pts):
                return False
            if len(sols) > 1 and (r_m, 0) not in fields:
                # the second solution's fields are needed at most radii: both made together (one geometry,
                # the same numbers); a refusal is left to fields_rms below, as it would come without this
                try:
                    unit_fields_together(sols, pts, field="compliance distance search")
                except InputError:
                    pass
            for j, sol in enumerate(sols):   # the same answer as the ratio over all solutions at once
                if (r_m, j) not in fields:
                    fields[r_m, j] = sol.fields_rms(pts, 1.0, field="compliance distance search")
                if _wire_shell_ratio([fields[r_m, j]], limits[env], avg_ant[env], pep_ant) > 1.0:
                    return True
            return False

        grid = np.concatenate([[max(r_min, d.dist_m)], common[common > max(r_min, d.dist_m)]])
        # Only the outermost radius over the limit matters (over[-1] below): scanned from the outside in,
        # the radii inside it need no fields.
        over = next(([r] for r in grid[::-1] if over_limit(r)), [])
        if not over:
            d_nf = grid[0]
        else:
            if over[-1] >= boundary_m:   # still above the limit at the boundary: search outward
                lo, hi = boundary_m, 2.0 * boundary_m
                while over_limit(hi) and hi < 64.0 * boundary_m:
                    lo, hi = hi, 2.0 * hi
            else:
                lo, hi = over[-1], grid[int(np.searchsorted(grid, over[-1])) + 1]
            for _ in range(5):
                mid = math.sqrt(lo * hi)
                lo, hi = (mid, hi) if over_limit(mid) else (lo, mid)
            d_nf = hi
        dist = max(d.dist_m, d_nf)
        out.append(dataclasses.replace(d, dist_m=dist, dist_ft=dist / M_PER_FT, inside_near_field=dist < boundary_m))
        what = (f"the moment-method fields on shells around the wires exceed the limit out to {d_nf:.2f} m, which "
                "governs" if d_nf > d.dist_m else
                "the moment-method fields on shells around the wires confirm the limit is met beyond it")
        flags.append(f"{d.environment} compliance distance {dist:.2f} m (from the nearest point of the wires) lies "
                     f"inside the near-field boundary {boundary_m:.2f} m: far-field estimate {d.dist_m:.2f} m; {what}"
                     + (f" ({WIRE_GROUND_BOUND})" if len(sols) > 1 else ""))
    return tuple(out), flags


def _totals(exposures, station: Station):
    """Simultaneous total at a place and the transmitters' shares."""
    by_cfg = {x.configuration: x for x in exposures}
    if not station.simultaneous:
        worst: dict[str, PlaceExposure] = {}
        for x in exposures:
            if x.transmitter not in worst or x.exposure_ratio > worst[x.transmitter].exposure_ratio:
                worst[x.transmitter] = x
        shares = tuple(TransmitterShare(t, x.configuration, x.exposure_ratio) for t, x in worst.items())
        rule = ("every transmitter may transmit at the same time, each its worst configuration here "
                "(default, conservative); ratios summed")
        return sum(s.exposure_ratio for s in shares), shares, rule
    groups = [list(g.configurations) for g in station.simultaneous]
    grouped = {c for g in groups for c in g}
    groups += [[c] for c in by_cfg if c not in grouped]
    best = max(groups, key=lambda g: sum(by_cfg[c].exposure_ratio for c in g))
    shares = tuple(TransmitterShare(by_cfg[c].transmitter, c, by_cfg[c].exposure_ratio) for c in best)
    rule = "declared simultaneous groups (a configuration in no group transmits alone); worst group summed"
    return sum(s.exposure_ratio for s in shares), shares, rule


def emitters(loaded: LoadedStation) -> list[Emitter]:
    """Every configuration of a station reduced to an :class:`Emitter`."""
    gf = ex.GROUND_FACTORS[loaded.model.ground_reflection]
    return [_configuration(loaded, i, c, gf)[1] for i, c in enumerate(loaded.model.configurations)]


def _segments_distance_m(points: np.ndarray, segments) -> float:
    """Smallest distance [m] from any point to any straight segment (a, b)."""
    from rfsafe.antenna.wire.geometry import point_segment_distances

    a = np.array([seg[0] for seg in segments], dtype=float)
    b = np.array([seg[1] for seg in segments], dtype=float)
    return float(point_segment_distances(points[:, None, :], a, b).min())


def _separation_m(loaded: LoadedStation, ant: Antenna, freq_hz: float, places) -> tuple[float, str, bool]:
    """Smallest distance from a person to the radiating structure, how it was found, and whether it is known.

    47 CFR 1.1307(b)(3) measures R from any part of the radiating structure; the declared position is
    the centre of radiation, so the structure's extent is used (rfsafe.antenna.extent). The third value
    is False when the antenna's size is an assumption: no exemption is claimed from such a distance.
    """
    from rfsafe.units import wavelength_m

    pts = np.array([(p.x_m, p.y_m, z) for p in places for z in _heights(p)], dtype=float)
    if ant.kind == "wire":
        segs = [(a, b) for w in loaded.wire_specs[ant.id].wires for a, b in zip(w.points_m[:-1], w.points_m[1:])]
        from rfsafe.antenna.wire.shield import route_polyline_m

        route = route_polyline_m(loaded.wire_specs[ant.id])   # the feedline shield radiates too
        segs += [] if route is None else list(zip(route[:-1], route[1:]))
        return _segments_distance_m(pts, segs), "nearest point of the wire geometry", True
    from rfsafe.antenna.extent import antenna_extent, nearest_distance_m

    extent = antenna_extent(ant, freq_hz)
    return max(float(nearest_distance_m(extent, pts).min()), 1e-3), extent.basis, extent.known


def _exemption(loaded: LoadedStation, configs, places):
    st = loaded.model
    if st.standard != "fcc" or not places:   # no place: no separation is known (exemption_case "no_places")
        return None
    from rfsafe.limits.exemption import ExemptionSource, fcc_exemption

    sources = []
    notes: list[str] = []
    unknown = []
    for c in configs:
        ant = next(a for a in st.antennas if a.id == c.antenna)
        sep, how, known = _separation_m(loaded, ant, c.freq_mhz * 1e6, places)
        notes.append(f"{c.id}: separation {sep:.2f} m, {how}")
        if not known:
            unknown.append(ant.id)
        sources.append(ExemptionSource(label=c.id, freq_hz=c.freq_mhz * 1e6,
                                       avg_power_w=max(c.avg_power_at_antenna_w.values()),
                                       gain_dbi=c.gain_dbi, separation_m=sep))
    import dataclasses

    result = fcc_exemption(sources)
    result = dataclasses.replace(result, assumptions=tuple(result.assumptions) + tuple(notes))
    if unknown and result.exempt:
        names = ", ".join(sorted(set(unknown)))
        result = dataclasses.replace(
            result, exempt=False,
            criterion=f"not claimed: the size of {names} is not declared, so the separation from its nearest part "
                      f"is not known (declare aperture_m, or element_span_m and boom_length_m for a beam); the "
                      f"test with an assumed size would give: {result.criterion}")
    return result


def assess(loaded: LoadedStation, *, today: dt.date | None = None) -> EvaluationResult:
    """Evaluate a loaded station file.

    Parameters
    ----------
    loaded : LoadedStation
        The validated station (see :func:`rfsafe.station.load_station`).
    today : datetime.date, optional
        Date printed when the file gives no evaluation date (default: today).
    """
    return assess_with_emitters(loaded, today=today)[0]


def assess_with_emitters(loaded: LoadedStation, *, today: dt.date | None = None, near_field_maps: bool = True,
                         memo: dict | None = None) -> tuple[EvaluationResult, list[Emitter]]:
    """:func:`assess` and the configurations' :class:`Emitter` objects from the same computation.

    ``near_field_maps=False`` leaves out the wire antennas' near-field maps (plot data only; the
    exposure at every place is the same). A ``memo`` dict receives every configuration's emitter and
    every place's exposures under their inputs, for later :func:`place_totals` calls on modified copies.
    """
    st = loaded.model
    info = standard_info(st.standard)
    gf = ex.GROUND_FACTORS[st.ground_reflection]
    if near_field_maps:
        _map_fields_together(loaded)
    pairs = [_configuration(loaded, i, c, gf, near_field_maps) for i, c in enumerate(st.configurations)]
    configs = tuple(p[0] for p in pairs)
    ems = [p[1] for p in pairs]
    keys = [_configuration_key(loaded, c, memo) for c in st.configurations] if memo is not None else None
    if keys is not None:
        for k, pair in zip(keys, pairs):
            memo[k] = (True, pair)
    by_id = {c.id: c for c in configs}
    places = []
    exceeded = []
    for c in configs:
        for part in c.exceeded_parts:
            exceeded.append(f"configuration {c.id}: {part} exceeds its rating")
    for pi_, place in enumerate(st.places):
        exposures = tuple(_place_exposure(em, loaded, pi_, place, by_id[em.configuration], em.solution)
                          for em in ems)
        if keys is not None:
            pk = _place_key(memo, place)
            for k, x in zip(keys, exposures):
                memo[(k, pk)] = (True, x)
        total, shares, rule = _totals(exposures, st)
        verdict = "complies" if total <= 1.0 else "exceeds"
        if verdict == "exceeds":
            exceeded.append(f"place {place.label!r}: total exposure ratio {total:.3g} > 1 ({place.environment})")
        flags = tuple(f for x in exposures for f in x.flags)
        places.append(PlaceResult(
            label=place.label, x_m=place.x_m, y_m=place.y_m, height_m=place.height_m,
            environment=place.environment, environment_label=info.environment_labels[place.environment],
            exposures=exposures, total_ratio=total, total_margin_db=float(ex.margin_db(total)),
            total_rule=rule, contributions=shares, verdict=verdict, flags=flags, why=place.why))
    exemption = _exemption(loaded, configs, st.places)
    if st.evaluation_date is not None:
        date, date_src = st.evaluation_date.isoformat(), "file"
    else:
        date, date_src = (today or dt.date.today()).isoformat(), "today"
    loss_models = sorted({c.line.loss_model for c in configs})
    notes = (
        "Average power = PEP x mode duty factor x transmit fraction; the transmit fraction is the largest "
        "share of the standard's averaging window that the declared schedule can fill.",
        f"Ground reflection: {st.ground_reflection} (power-density factor F = {gf:g}).",
        "Gain: peak gain toward every place unless an antenna opts in to its pattern (use_pattern = true); "
        "inside the near field the peak gain is used even then. Beam patterns below the antenna: at least 1/2 of "
        "the peak gain x sin^2(depression) (-3 dB straight down), a conservative downward lobe.",
        "Compliance distances use peak gain and the far-field prediction, for each environment's limit, and are "
        "measured from the nearest part of the antenna.",
        "Distances are to the nearest part of each antenna's radiating structure (wire geometry, textbook element "
        "sizes, a beam's elements and boom, or a stated assumed size; each result names it); places closer than "
        "lambda/2pi (or 2D^2/lambda for an aperture) are flagged: far-field estimate.",
        *(("Wire antennas: places within max(lambda/2pi, 2D^2/lambda) of any part of the wires are evaluated "
           "with the moment-method solver; beyond it the far-field estimate from the nearest wire point is never "
           "below the solver's value; a wire declared over free space, or over a perfect ground without touching "
           "it, is solved over both and the worse governs (a bound: real soil lies between the two); a wire declared over real ground "
           "(ground = \"real\" with its soil) is solved over that soil instead (Sommerfeld integrals), without the "
           "bound.",)
          if any(c.wire is not None for c in configs) else ()),
        f"Line loss model: {'; '.join(loss_models)}.",
        f"Limits: {info.name}; averaging times as the standard gives them per environment.",
    )
    result = EvaluationResult(
        title=st.title, station=st.station, evaluator=st.evaluator, evaluation_date=date,
        evaluation_date_source=date_src, standard=st.standard, standard_name=info.name,
        environment_labels=dict(info.environment_labels), rfsafe_version=__version__,
        input_file=loaded.path.name, input_sha256=loaded.sha256, ground_reflection=st.ground_reflection,
        ground_factor=gf, loss_model="; ".join(loss_models), configurations=configs, places=tuple(places),
        exemption=exemption, **_verdicts(configs, places), exceeded=tuple(exceeded),
        method_notes=notes, cautions=CAUTIONS, **_plan_fields(loaded, configs, ems, near_field_maps),
        data_verification=figure_checks(configs, tuple(places), exemption))
    return result, ems


def _configuration_key(loaded: LoadedStation, c: Configuration, memo: dict | None = None) -> tuple:
    """Everything a configuration's emitter and its exposure at a place depend on (for :func:`place_totals`);
    with a ``memo``, each (frozen) model's JSON is made once per object (see :func:`_json_of`)."""
    st = loaded.model
    tx = next(t for t in st.transmitters if t.id == c.transmitter)
    fline = next(f for f in st.feedlines if f.id == c.feedline)
    ant = next(a for a in st.antennas if a.id == c.antenna)
    spec = loaded.wire_specs.get(ant.id)
    return (st.standard, st.ground_reflection, st.exact_line_loss, st.near_field_spatial_average,
            _json_of(memo, c), _json_of(memo, tx), _json_of(memo, fline), _json_of(memo, ant),
            None if spec is None else _json_of(memo, spec), id(loaded.pattern_tables.get(ant.id)))


def _json_of(memo: dict | None, model) -> str:
    """``model.model_dump_json()``, kept in ``memo`` per object (the models are frozen; the memo keeps the object,
    so its ``id`` is not reused while the entry exists). The remedies' trials change one model at a time: the
    others are the same objects, dumped once."""
    if memo is None:
        return model.model_dump_json()
    held = memo.get(("json", id(model)))
    if held is None or held[0] is not model:
        held = memo[("json", id(model))] = (model, model.model_dump_json())
    return held[1]


def _memoised(memo: dict | None, key, compute):
    """``compute()``, kept in ``memo`` under ``key`` (an input error is kept and raised again)."""
    if memo is None:
        return compute()
    if key not in memo:
        try:
            memo[key] = (True, compute())
        except InputError as err:
            memo[key] = (False, err)
    ok, value = memo[key]
    if not ok:
        raise value
    return value


def place_totals(loaded: LoadedStation, memo: dict | None = None) -> list[tuple[str, float]]:
    """(label, total exposure ratio [1]) of every place, computed exactly as :func:`assess` computes it.

    Nothing else is evaluated (no compliance-distance shells, loads, feedline-shield choke search,
    exemption or plot data). With a ``memo`` dict (kept by the caller across calls, see
    :func:`assess_with_emitters`), a configuration whose inputs are unchanged, and its exposure at an
    unchanged place, are taken from it: the repeated evaluations of :mod:`rfsafe.remedies`, which change
    one parameter at a time, then compute only what that parameter changes. The values are the same
    numbers as a fresh evaluation gives (the same functions on the same inputs).

    Raises
    ------
    InputError
        Where :func:`assess` raises one (a place on a conductor, an implausible line loss).
    """
    st = loaded.model
    gf = ex.GROUND_FACTORS[st.ground_reflection]
    keys = [_configuration_key(loaded, c, memo) for c in st.configurations] if memo is not None else [None] * len(
        st.configurations)
    # Exposures are kept only for configurations the memo already held (those of the first evaluation):
    # a changed configuration (a trial power, duty or schedule) is rarely asked again, and keeping its
    # exposure at every place for every trial grew as places x configurations x trials.
    kept = [memo is not None and k in memo for k in keys]
    pairs = [_memoised(memo, k, lambda i=i, c=c: _configuration(loaded, i, c, gf, False, lean=True))
             for (i, c), k in zip(enumerate(st.configurations), keys)]
    # Such a configuration is evaluated at all places together (place_ratios: the same ratios, elementwise);
    # a place it refuses (on a conductor) makes the whole evaluation refused, as assess refuses it.
    fresh = {j: _ratios_at_places(em, loaded, cres) for j, (keep, (cres, em)) in enumerate(zip(kept, pairs))
             if not keep}
    # A kept configuration's exposures at the same places (the same place keys in the same order) are held
    # as one column: the trials of :mod:`rfsafe.remedies` then look up one column per configuration instead
    # of one memo entry per place and configuration (the same objects either way).
    pks = [_place_key(memo, place) for place in st.places] if memo is not None else None
    sig = tuple(pks) if pks is not None else None
    cols = {j: memo.get(("column", k, sig)) for j, k in enumerate(keys) if j not in fresh} if memo is not None else {}
    cols = {j: col for j, col in cols.items() if col is not None}
    rows = []
    for pi_, place in enumerate(st.places):
        pk = pks[pi_] if pks is not None else None
        rows.append(tuple(
            fresh[j][pi_] if j in fresh else cols[j][pi_] if j in cols else _memoised(
                memo, (k, pk), lambda cres=cres, em=em: _place_exposure(em, loaded, pi_, place, cres, em.solution))
            for j, (k, (cres, em)) in enumerate(zip(keys, pairs))))
    if memo is not None:
        for j, k in enumerate(keys):
            if j not in fresh and j not in cols:
                memo[("column", k, sig)] = tuple(row[j] for row in rows)
    return [(place.label, _totals(row, st)[0]) for place, row in zip(st.places, rows)]


class _Ratio(NamedTuple):
    """The part of a :class:`PlaceExposure` that :func:`_totals` reads (a named tuple: a private record, made
    faster at import than a frozen dataclass)."""

    configuration: str
    transmitter: str
    exposure_ratio: float


def _ratios_at_places(em: Emitter, loaded: LoadedStation, cres: ConfigurationResult) -> list[_Ratio]:
    """One configuration's exposure ratio at every place of the station, places of one environment and one
    set of body heights evaluated together by :func:`place_ratios`.

    Raises
    ------
    InputError
        Where a place lies on or next to a conductor (the evaluation refuses it).
    """
    places = loaded.model.places
    groups: dict = {}
    for i, place in enumerate(places):
        groups.setdefault((place.environment, tuple(_heights(place))), []).append(i)
    ratio = np.empty(len(places))
    for (env, heights), idx in groups.items():
        ratio[idx] = place_ratios(em, loaded, cres, env, [places[i].x_m for i in idx], [places[i].y_m for i in idx],
                                  list(heights))
    if not np.all(np.isfinite(ratio)):
        bad = places[int(np.flatnonzero(~np.isfinite(ratio))[0])]
        raise InputError(f"places: {bad.label!r} lies on or next to a conductor of antenna {em.antenna.id} "
                         "(accepted: places clear of the wires)")
    return [_Ratio(em.configuration, em.transmitter, float(r)) for r in ratio]


def _place_key(memo: dict, place) -> str:
    """The memo key of a place: its inputs as JSON, made once per place object (the memo keeps the object,
    so its ``id`` is not reused while the entry exists)."""
    held = memo.get(("place", id(place)))
    if held is None or held[0] is not place:
        held = memo[("place", id(place))] = (place, place.model_dump_json())
    return held[1]


def _verdicts(configs, places) -> dict:
    """The exposure verdict (people) and the equipment verdict (line, connectors, tuner), each with its reasons.

    Exposure: EXCEEDS when some place's total ratio is above 1; NOT EVALUATED when no place is declared
    (the compliance distances are still shown, but no person's exposure was judged); else COMPLIES.
    Equipment: RATING EXCEEDED when any rated part is above its rating; NOT RATED when no part has a
    rating to compare with; else WITHIN RATINGS.
    """
    if not places:
        exposure = "NOT EVALUATED"
        why = ["no place is declared ([[places]]): no person's exposure was evaluated, so compliance is not "
               "claimed; the compliance distances show how far from each antenna the limits are met"]
    else:
        over = [p for p in places if p.verdict != "complies"]
        worst = max(places, key=lambda p: p.total_ratio)
        if over:
            exposure = "EXCEEDS"
            why = [f"place {p.label!r}: total exposure ratio {p.total_ratio:.3g} > 1 ({p.environment})" for p in over]
        else:
            exposure = "COMPLIES"
            why = [f"all {len(places)} place{'s' if len(places) != 1 else ''} within the limits; highest total "
                   f"exposure ratio {worst.total_ratio:.3g} at {worst.label!r}"]
        estimated = sorted({p.label for p in places for x in p.exposures
                            if x.inside_near_field and x.near_field_ratio is None})
        if estimated:
            why.append("far-field estimate inside the near field at " + ", ".join(repr(e) for e in estimated)
                       + ": confirm by near-field analysis or measurement")
    equipment, reasons = equipment_verdict([(f"configuration {c.id}", c.line) for c in configs]
                                           + [(f"configuration {c.id}", _LoadParts(c.loads)) for c in configs
                                              if c.loads])
    return dict(exposure_verdict=exposure, exposure_reasons=tuple(why), equipment_verdict=equipment,
                equipment_reasons=reasons)


def equipment_verdict(lines) -> tuple[str, tuple[str, ...]]:
    """Equipment verdict and reasons from ``(label, LineResult)`` pairs (stations and sites alike)."""
    rated = [(who, ps) for who, ln in lines for ps in ln.part_stresses if ps.rating is not None]
    unrated = [(who, ps) for who, ln in lines for ps in ln.part_stresses if ps.rating is None]
    exceeded = [(who, ps) for who, ps in rated if ps.exceeded]
    if exceeded:
        verdict = "RATING EXCEEDED"
        reasons = [f"{who}: {ps.part} {ps.stress:.4g} {ps.unit} exceeds its rating {ps.rating:.4g} {ps.unit}"
                   for who, ps in exceeded]
    elif rated:
        verdict = "WITHIN RATINGS"
        who, least = min(rated, key=lambda r: r[1].headroom)
        reasons = [f"every rated part within its rating; least headroom {least.headroom:.3g}x: {least.part} "
                   f"({who})"]
    else:
        verdict = "NOT RATED"
        reasons = ["no line, connector or tuner rating is known: equipment stress was computed but not compared"]
    if unrated and rated:
        reasons.append("not compared (no rating): " + ", ".join(sorted({ps.part for _, ps in unrated})))
    return verdict, tuple(reasons)


def antenna_outline(ant, freqs_hz, wire_spec=None):
    """Straight pieces of an antenna's radiating structure in the station frame, its size and basis.

    Parameters
    ----------
    ant : rfsafe.station.schema.Antenna
        The declared antenna.
    freqs_hz : sequence of float
        Frequencies at which it is used [Hz]; the lowest gives the longest textbook length.
    wire_spec : WireAntennaSpec, optional
        Validated wire geometry of a wire antenna.

    Returns
    -------
    (tuple, float or None, str)
        Segments ((x, y, z), (x, y, z)) [m], the largest dimension [m] (None when not known) and
        where it comes from.

    Notes
    -----
    Textbook lengths (common practice): a half-wave dipole lambda/2, a quarter-wave vertical
    lambda/4 (centred on the declared centre of radiation), a short dipole lambda/10; a horizontal
    dipole runs broadside to its azimuth. A declared ``aperture_m`` is drawn broadside to the beam
    heading for a horizontally polarised antenna and vertical for a vertically polarised one.
    """
    from rfsafe.units import wavelength_m

    centre = np.array([ant.x_m, ant.y_m, ant.height_m], dtype=float)
    if wire_spec is not None:
        segs = tuple((tuple(map(float, a)), tuple(map(float, b)))
                     for w in wire_spec.wires for a, b in zip(w.points_m[:-1], w.points_m[1:]))
        pts = np.array([p for s in segs for p in s])
        size = float(max(np.linalg.norm(pts[:, None, :] - pts[None, :, :], axis=2).max(), 0.0))
        return segs, size, "wire geometry as declared"
    lam = wavelength_m(min(freqs_hz)) if freqs_hz else None
    fraction = {"half-wave-dipole": (0.5, "λ/2"), "quarter-wave-vertical": (0.25, "λ/4"),
                "short-dipole": (0.1, "λ/10")}.get(ant.kind)
    vertical = ant.polarisation == "vertical" or ant.kind == "quarter-wave-vertical"
    az = math.radians(ant.azimuth_deg + 90.0)
    broadside = np.array([math.sin(az), math.cos(az), 0.0])
    up = np.array([0.0, 0.0, 1.0])
    if fraction is not None and lam is not None:
        size = fraction[0] * lam
        basis = f"textbook length {fraction[1]} at {min(freqs_hz) / 1e6:g} MHz"
    elif ant.aperture_m is not None:
        size = float(ant.aperture_m)
        basis = "declared aperture_m, " + ("vertical" if vertical else "broadside to the heading")
    else:
        return (), None, "no dimension declared: drawn as a point at the declared position"
    axis = up if vertical else broadside
    a, b = centre - size / 2 * axis, centre + size / 2 * axis
    if vertical and a[2] < 0:        # a vertical structure stands on the ground, never below it
        a, b = a - a[2] * up, b - a[2] * up
    return ((tuple(map(float, a)), tuple(map(float, b))),), float(size), basis


def _plan_fields(loaded: LoadedStation, configs, ems, plan: bool) -> dict:
    """Identity extras, the override record, the antennas' extent and the keep-out plan of the worksheet
    (the plan is plot data: left out with the near-field maps)."""
    from rfsafe.results import AntennaSummary

    st = loaded.model
    outlines = {a.id: antenna_outline(a, [c.freq_mhz * 1e6 for c in configs if c.antenna == a.id],
                                      loaded.wire_specs.get(a.id)) for a in st.antennas}
    antennas = tuple(AntennaSummary(
        id=a.id, description=a.description, kind=a.kind, x_m=a.x_m, y_m=a.y_m, height_m=a.height_m,
        azimuth_deg=a.azimuth_deg, tilt_deg=a.tilt_deg, polarisation=a.polarisation, size_m=outlines[a.id][1],
        size_basis=outlines[a.id][2], segments_m=outlines[a.id][0]) for a in st.antennas)
    own = loaded.file_standard or st.standard
    return dict(file_standard=own, standard_overridden=own != st.standard, call_sign=st.call_sign,
                licence=st.licence, address=st.address, antennas=antennas,
                plan=_station_plan(loaded, ems, configs, outlines) if plan else None)


def _station_plan(loaded: LoadedStation, ems, configs, outlines):
    from rfsafe.site.plan import station_plan   # the site package is loaded only where a plan is wanted

    return station_plan(loaded, ems, configs, outlines)
