"""What would make a place comply: remedies and ground-level keep-out distances, solved by re-evaluation.

Every answer here comes from the same evaluation as ``rfsafe evaluate`` (:func:`rfsafe.assess.assess`:
power chain, line loss, pattern or peak gain, the moment-method near field of wire antennas, sums over
simultaneous transmitters), run again on a copy of the station with one parameter changed, and a
bracketing root finder on that parameter. Only the places' totals are recomputed, and only where the
change reaches (:func:`rfsafe.assess.place_totals`: an unchanged configuration or place keeps its
numbers from the previous evaluation, which are the numbers a fresh evaluation would give). No separate
formula is used, so an answer fed back into the station file gives a total exposure ratio of 1 (within
:data:`RATIO_TOLERANCE`, on the compliant side).

Parameters that scale the power (PEP, duty factor, schedule, line loss) are searched on a log scale by
false position with the Illinois modification (the ratio is then close to a power law, so few
evaluations are needed; the bracket always holds the answer). Geometric parameters (antenna height,
distance of a place) are not monotonic in general (patterns, several antennas, near-field boundaries):
they are scanned outward on stated steps and the first compliant step is refined inside its bracket.
"""

from __future__ import annotations

import contextlib
import dataclasses
import math
from collections.abc import Callable

from rfsafe.errors import InputError
from rfsafe.results import ConfigurationRemedies, EvaluationResult, GroundKeepOut, PlaceRemedies, Remedy

__all__ = ["RATIO_TOLERANCE", "HEIGHT_STEPS_M", "DISTANCE_STEPS_M", "BODY_HEIGHTS_M", "solve_crossing",
           "place_remedies", "configuration_remedies", "ground_keep_out", "with_answers", "largest_pep_w",
           "total_ratio"]

#: A solved value gives a re-evaluated total ratio in [1 - RATIO_TOLERANCE, 1] unless the evaluation itself
#: jumps there (a change of method at a near-field boundary), which the remedy's text then says.
RATIO_TOLERANCE = 0.002
#: Antenna raised by these amounts above its declared height [m] (scan; the first compliant step is refined).
HEIGHT_STEPS_M = (0.5, 1, 2, 3, 5, 8, 12, 20, 30, 45, 60)
#: A place moved straight away from the antenna's foot by these amounts [m] (scan, then refined).
DISTANCE_STEPS_M = (0.5, 1, 2, 4, 8, 15, 25, 50, 100, 200)
#: Body heights of a person standing on the ground, feet to head, worst taken [m] (common practice; the
#: same heights as the site review's default and the near-field maps).
BODY_HEIGHTS_M = (0.5, 1.0, 1.5, 2.0)
#: Re-evaluations one run may spend on remedies (deterministic, so a worksheet is reproducible); answers
#: left when it is spent are marked "not solved" and say so.
EVALUATION_BUDGET = 250
#: Largest power factor searched above today's value (a headroom answer beyond it reads "more than").
_MAX_FACTOR = 1e6
_MAX_LOSS_DB = 60.0
#: Steps of the outward scan for ground-level keep-out distances (the last step above the limit is refined).
_KEEP_OUT_STEPS = 24


# --------------------------------------------------------------------------------------------------
# the root finder


def solve_crossing(ratio_of: Callable[[float], float], x_ok: float, r_ok: float, x_bad: float, r_bad: float,
                   *, log_x: bool = True, tol: float = RATIO_TOLERANCE, max_iter: int = 60) -> tuple[float, float]:
    """The compliant end of a bracket where the exposure ratio crosses 1.

    False position on (x, ln ratio) with the Illinois modification, on ln x when ``log_x``; every
    fourth step is a bisection, so a discontinuous ratio still converges. The bracket always holds a
    crossing; the returned ``x`` always has ratio <= 1.

    Parameters
    ----------
    ratio_of : callable
        x -> total exposure ratio (the full evaluation).
    x_ok, r_ok : float
        A value with ratio <= 1 and its ratio.
    x_bad, r_bad : float
        A value with ratio > 1 and its ratio.
    log_x : bool
        Search on ln x (positive parameters that scale a power) instead of x.
    tol : float
        Stop when the compliant end's ratio is >= 1 - tol.

    Returns
    -------
    x, ratio : float
        The compliant end of the final bracket and its ratio.

    References
    ----------
    .. [1] M. Dowell and P. Jarratt, "A modified regula falsi method for computing the root of an
       equation", BIT 11 (1971) 168-174 (the Illinois method).
    """
    if not (r_ok <= 1.0 < r_bad):
        raise ValueError("solve_crossing needs ratio(x_ok) <= 1 < ratio(x_bad)")
    u = (lambda x: math.log(x)) if log_x else (lambda x: x)
    inv = (lambda v: math.exp(v)) if log_x else (lambda v: v)

    def g(r: float) -> float:
        return math.log(r) if r > 0 else -50.0   # ln ratio; a zero ratio is far on the compliant side

    a, fa = u(x_ok), g(r_ok)
    b, fb = u(x_bad), min(g(r_bad), 50.0)
    keep = 0
    for it in range(max_iter):
        if r_ok >= 1.0 - tol or abs(a - b) <= 1e-12 * max(1.0, abs(a)):
            break
        if it % 4 == 3 or fb == fa:
            c = 0.5 * (a + b)
        else:
            c = b - fb * (b - a) / (fb - fa)
            lo, hi = min(a, b), max(a, b)
            if not (lo < c < hi):
                c = 0.5 * (a + b)
        r = ratio_of(inv(c))
        fc = g(r) if r < math.inf else 50.0
        if r <= 1.0:
            a, fa, x_ok, r_ok = c, fc, inv(c), r
            if keep == -1:
                fb *= 0.5   # Illinois: the bad end stayed twice, halve its weight
            keep = -1
        else:
            b, fb = c, fc
            if keep == 1:
                fa *= 0.5
            keep = 1
    return x_ok, r_ok


# --------------------------------------------------------------------------------------------------
# modified copies of a loaded station


def _with_model(loaded, **update):
    return dataclasses.replace(loaded, model=loaded.model.model_copy(update=update))


def _replace_item(items, key: str, value: str, **update) -> list:
    return [it.model_copy(update=update) if getattr(it, key) == value else it for it in items]


def _set_pep(loaded, tx_id: str, pep_w: float):
    return _with_model(loaded, transmitters=_replace_item(loaded.model.transmitters, "id", tx_id, pep_w=pep_w))


def _set_duty(loaded, cfg_id: str, duty: float):
    return _with_model(loaded, configurations=_replace_item(loaded.model.configurations, "id", cfg_id,
                                                            duty_factor=duty))


def _set_schedule(loaded, cfg_id: str, on_min: float, window_min: float):
    from rfsafe.station.schema import Schedule

    sched = Schedule(on_minutes=on_min, off_minutes=max(window_min - on_min, 0.0))
    return _with_model(loaded, configurations=_replace_item(loaded.model.configurations, "id", cfg_id,
                                                            schedule=sched))


def _add_loss(loaded, cfg_id: str, extra_db: float):
    """The configuration gets its own copy of its feedline with ``extra_db`` more connector loss."""
    st = loaded.model
    cfg = next(c for c in st.configurations if c.id == cfg_id)
    f = next(f for f in st.feedlines if f.id == cfg.feedline)
    new_id = f"{f.id} (+{cfg_id})"
    copy = f.model_copy(update={"id": new_id, "connector_loss_db": f.connector_loss_db + extra_db})
    return _with_model(loaded, feedlines=list(st.feedlines) + [copy],
                       configurations=_replace_item(st.configurations, "id", cfg_id, feedline=new_id))


def _wire_touches_ground(spec) -> bool:
    return any(p[2] <= 1e-6 for w in spec.wires for p in w.points_m)


def _set_height(loaded, ant_id: str, height_m: float):
    st = loaded.model
    ant = next(a for a in st.antennas if a.id == ant_id)
    dz = height_m - ant.height_m
    update = {"height_m": height_m}
    specs = loaded.wire_specs
    if ant.kind == "wire":
        wires = [w.model_copy(update={"points_m": [[p[0], p[1], p[2] + dz] for p in w.points_m]})
                 for w in ant.wire.wires]
        spec = ant.wire.model_copy(update={"wires": wires})
        update["wire"] = spec
        specs = {**loaded.wire_specs, ant_id: spec}
    new = _with_model(loaded, antennas=_replace_item(st.antennas, "id", ant_id, **update))
    return dataclasses.replace(new, wire_specs=specs)


def _move_place(loaded, label: str, x_m: float, y_m: float):
    return _with_model(loaded, places=_replace_item(loaded.model.places, "label", label, x_m=x_m, y_m=y_m))


def _without_antenna(loaded, ant_id: str):
    """The station with every configuration on an antenna left out (None when nothing else transmits)."""
    st = loaded.model
    keep = [c for c in st.configurations if c.antenna != ant_id]
    if not keep:
        return None
    ids = {c.id for c in keep}
    groups = [g.model_copy(update={"configurations": [c for c in g.configurations if c in ids]})
              for g in st.simultaneous]
    return _with_model(loaded, configurations=keep, simultaneous=[g for g in groups if g.configurations])


def _only_place(loaded, label: str):
    return _with_model(loaded, places=[p for p in loaded.model.places if p.label == label])


#: Emitters and place exposures of the station being answered, under their inputs (see
#: :func:`rfsafe.assess.place_totals`); empty outside :func:`_reused_evaluations`.
_memo: list[dict] = []


@contextlib.contextmanager
def _reused_evaluations(memo: dict | None = None):
    """Within the block, repeated evaluations reuse what the changed parameter leaves unchanged.

    The remedies re-evaluate the same station many times with only a power, a schedule, a height or a
    place changed, and read only the places' total exposure ratios (:func:`rfsafe.assess.place_totals`):
    a configuration and a place the change leaves alone are not evaluated again. ``memo`` may come
    filled from the first evaluation (:func:`rfsafe.assess.assess_with_emitters`).
    """
    outer = list(_memo)
    _memo[:] = [memo if memo is not None else (outer[0] if outer else {})]
    try:
        yield
    finally:
        _memo[:] = outer


class _BudgetSpent(Exception):
    """The run's :data:`EVALUATION_BUDGET` is spent (caught per remedy, never reaches the user)."""


_budget: list[int] = []   # evaluations left in the current with_answers run (empty: no budget)


def total_ratio(loaded, label: str | None = None) -> float:
    """Total exposure ratio at one place (or the worst over all places) by the full evaluation.

    A station the change makes impossible to evaluate (a place on a conductor) counts as exceeding.
    """
    from rfsafe.assess import place_totals

    if _budget:
        if _budget[0] <= 0:
            raise _BudgetSpent
        _budget[0] -= 1
    try:
        totals = place_totals(loaded, _memo[0] if _memo else None)
    except InputError:
        return math.inf
    totals = [t for name, t in totals if label is None or name == label]
    return max(totals) if totals else 0.0


# --------------------------------------------------------------------------------------------------
# one parameter


def _power_like(ratio_of, now: float, r_now: float, upper: float | None) -> tuple[str, float | None, float | None]:
    """Largest x (scaling a power, ratio increasing with x) with ratio <= 1, searched in (0, upper]."""
    top = upper if upper is not None else now * _MAX_FACTOR
    if not math.isfinite(r_now):     # unbounded (a place at an antenna): no power helps
        return "no value helps", None, None
    if r_now <= 1.0:
        if upper is not None and now >= upper:
            return "already complies", now, r_now
        x_ok, r_ok = now, r_now
        x = min(top, now / max(r_now, 1e-300) * 1.02)
        while True:
            r = ratio_of(x)
            if r > 1.0:
                x_ok, r_ok = solve_crossing(ratio_of, x_ok, r_ok, x, r)
                return "solved", x_ok, r_ok
            x_ok, r_ok = x, r
            if x >= top:
                return "already complies", x, r
            x = min(top, x * 4.0)
    x = now / r_now * 0.98          # exact for a ratio proportional to x
    r = ratio_of(x)
    if r <= 1.0:
        x_ok, r_ok = solve_crossing(ratio_of, x, r, now, r_now)
        return "solved", x_ok, r_ok
    floor = now / _MAX_FACTOR
    r_floor = ratio_of(floor)
    if r_floor > 1.0:                # other sources alone exceed: no value helps
        return "no value helps", None, None
    x_ok, r_ok = solve_crossing(ratio_of, floor, r_floor, x, r)
    return "solved", x_ok, r_ok


def _scan_out(ratio_of, now: float, steps, r_now: float) -> tuple[str, float | None, float | None]:
    """Smallest x >= now (geometric parameter) on the scan with ratio <= 1, refined inside its bracket."""
    if r_now <= 1.0:
        return "already complies", now, r_now
    prev, r_prev = now, r_now
    for s in steps:
        x = now + s
        r = ratio_of(x)
        if r <= 1.0:
            x_ok, r_ok = solve_crossing(ratio_of, x, r, prev, r_prev, log_x=False)
            return "solved", x_ok, r_ok
        prev, r_prev = x, r
    return "no value helps", None, None


def _fmt(x: float | None, unit: str) -> str:
    from math import isfinite

    if x is None or not isfinite(x):
        return "-"
    return f"{x:.3g} {unit}" if abs(x) < 1000 else f"{x:.0f} {unit}"


def _jump_note(r: float | None) -> str:
    if r is None or r >= 1.0 - RATIO_TOLERANCE:
        return ""
    return (f" (the ratio jumps there, to {r:.3g}: the evaluation method changes at this value, "
            "e.g. at a near-field boundary)")


def _pep_remedy(loaded, tx, ratio_of_loaded, r_now) -> Remedy:
    def ratio_of(x):
        return ratio_of_loaded(_set_pep(loaded, tx.id, x))

    status, x, r = _power_like(ratio_of, tx.pep_w, r_now, None)
    subject = f"transmitter {tx.id}"
    if status == "no value helps":
        text = f"{subject}: no PEP helps (the other sources alone exceed the limit)"
    elif status == "already complies":
        text = f"{subject}: complies up to {_fmt(x, 'W')} PEP and beyond (searched to {_MAX_FACTOR:g} x today)"
    else:
        text = f"{subject}: largest PEP {_fmt(x, 'W')} (today {_fmt(tx.pep_w, 'W')}){_jump_note(r)}"
    return Remedy("pep_w", subject, tx.pep_w, x, status, r, text)


def _duty_remedy(loaded, cres, env: str, ratio_of_loaded, r_now) -> Remedy:
    """Largest average power through the duty factor (PEP unchanged), reported as average power [W]."""
    def ratio_of(d):
        return ratio_of_loaded(_set_duty(loaded, cres.id, d))

    fill = cres.transmit_fraction[env]
    status, d, r = _power_like(ratio_of, cres.duty_factor, r_now, 1.0)
    subject = f"configuration {cres.id}"
    now = cres.avg_power_w[env]
    value = None if d is None else cres.pep_w * d * fill
    if status == "no value helps":
        text = (f"{subject}: no average power helps (the other sources alone exceed, or an instantaneous "
                "limit compared with PEP governs)")
    elif status == "already complies":
        text = f"{subject}: complies at any duty factor up to 1 ({_fmt(value, 'W')} average)"
    else:
        text = (f"{subject}: largest average power {_fmt(value, 'W')} at the transmitter (today {_fmt(now, 'W')}), "
                f"i.e. duty factor {d:.3g} at {_fmt(cres.pep_w, 'W')} PEP{_jump_note(r)}")
    return Remedy("avg_power_w", subject, now, value, status, r, text)


def _schedule_remedy(loaded, cres, env: str, ratio_of_loaded, r_now) -> Remedy:
    window = cres.averaging_minutes.get(env)
    subject = f"configuration {cres.id}"
    if not window:
        return Remedy("schedule_on_minutes", subject, None, None, "not applicable", None,
                      f"{subject}: no transmit schedule helps (the {env} limit has no averaging time)")
    now = cres.transmit_fraction[env] * window

    def ratio_of(on):
        return ratio_of_loaded(_set_schedule(loaded, cres.id, on, window))

    status, on, r = _power_like(ratio_of, now, r_now, window)
    if status == "no value helps":
        text = (f"{subject}: no schedule helps (the other sources alone exceed, or an instantaneous limit "
                "compared with PEP governs)")
    elif status == "already complies":
        text = f"{subject}: complies transmitting continuously through the {window:g}-min averaging window"
    else:
        text = (f"{subject}: transmit at most {on:.3g} min in every {window:g} min (on {on:.3g} min, "
                f"off {window - on:.3g} min; today {now:.3g} min){_jump_note(r)}")
    return Remedy("schedule_on_minutes", subject, now, on, status, r, text)


def _loss_remedy(loaded, cres, ratio_of_loaded, r_now) -> Remedy:
    subject = f"configuration {cres.id}"
    now = cres.line_loss_db
    if r_now <= 1.0:
        return Remedy("line_loss_db", subject, now, None, "already complies", r_now,
                      f"{subject}: complies with today's line loss {now:.2f} dB")

    # extra loss e >= 0 lowers the power like a factor 10^(-e/10): search on that factor
    def ratio_of(factor):
        return ratio_of_loaded(_add_loss(loaded, cres.id, -10.0 * math.log10(factor)))

    import rfsafe.assess as assess_module

    # the evaluation refuses an implausible total line loss (a unit slip): search only below it
    cap = min(getattr(assess_module, "MAX_LINE_LOSS_DB", _MAX_LOSS_DB), _MAX_LOSS_DB)
    extra_max = cap - now - 0.1
    if extra_max <= 0.0:
        return Remedy("line_loss_db", subject, now, None, "not applicable", None,
                      f"{subject}: the line loss is already near the largest the evaluation accepts ({cap:g} dB)")
    floor = 10.0 ** (-extra_max / 10.0)
    r_floor = ratio_of(floor)
    if r_floor > 1.0:
        return Remedy("line_loss_db", subject, now, None, "no value helps", None,
                      f"{subject}: no line loss up to {cap:g} dB in all helps (the largest the evaluation accepts)")
    factor, r = solve_crossing(ratio_of, floor, r_floor, 1.0, r_now)
    extra = -10.0 * math.log10(factor)
    return Remedy("line_loss_db", subject, now, now + extra, "solved", r,
                  f"{subject}: needs {extra:.2f} dB more loss between transmitter and antenna (line loss "
                  f"{now + extra:.2f} dB instead of {now:.2f} dB){_jump_note(r)}")


def _height_remedy(loaded, ant, ratio_of_loaded, r_now) -> Remedy:
    subject = f"antenna {ant.id}"
    if ant.kind == "wire" and (_wire_touches_ground(ant.wire) or getattr(ant.wire, "shield", None) is not None):
        return Remedy("antenna_height_m", subject, ant.height_m, None, "not applicable", None,
                      f"{subject}: raising it is not solved here (the wire model touches the ground or "
                      "includes the feedline shield, which would not move with it)")

    without = _without_antenna(loaded, ant.id)
    if without is not None and ratio_of_loaded(without) > 1.0:
        return Remedy("antenna_height_m", subject, ant.height_m, None, "no value helps", None,
                      f"{subject}: no height helps (the other antennas alone exceed the limit)")

    def ratio_of(h):
        return ratio_of_loaded(_set_height(loaded, ant.id, h))

    status, h, r = _scan_out(ratio_of, ant.height_m, HEIGHT_STEPS_M, r_now)
    if status == "no value helps":
        text = f"{subject}: no height up to {ant.height_m + HEIGHT_STEPS_M[-1]:g} m helps"
    elif status == "already complies":
        text = f"{subject}: complies at today's height {ant.height_m:g} m"
    else:
        text = f"{subject}: raise it to at least {h:.2f} m (today {ant.height_m:g} m){_jump_note(r)}"
    return Remedy("antenna_height_m", subject, ant.height_m, h, status, r, text)


def _distance_remedy(loaded, place, ant, ratio_of_loaded, r_now) -> Remedy:
    """Move the place straight away from the antenna's foot: its smallest horizontal distance."""
    dx, dy = place.x_m - ant.x_m, place.y_m - ant.y_m
    now = math.hypot(dx, dy)
    ux, uy = (dx / now, dy / now) if now > 1e-9 else (1.0, 0.0)
    subject = f"place {place.label}"

    def ratio_of(d):
        return ratio_of_loaded(_move_place(loaded, place.label, ant.x_m + ux * d, ant.y_m + uy * d))

    status, d, r = _scan_out(ratio_of, now, DISTANCE_STEPS_M, r_now)
    if status == "no value helps":
        text = (f"{subject}: no horizontal distance up to {now + DISTANCE_STEPS_M[-1]:g} m from the foot of "
                f"{ant.id} helps")
    elif status == "already complies":
        text = f"{subject}: complies at {now:.2f} m from the foot of {ant.id}"
    else:
        text = (f"{subject}: at least {d:.2f} m horizontally from the foot of antenna {ant.id}, moving straight "
                f"away from it (today {now:.2f} m){_jump_note(r)}")
    return Remedy("distance_m", subject, now, d, status, r, text)


# --------------------------------------------------------------------------------------------------
# per place and per configuration


def place_remedies(loaded, result: EvaluationResult) -> tuple[PlaceRemedies, ...]:
    """Remedies for every place that exceeds: per contributing transmitter, configuration and antenna.

    Each remedy changes one thing, everything else as in the station file, and is solved with the full
    evaluation of that place (all transmitters that count there, summed as ``evaluate`` sums them).
    """
    with _reused_evaluations():
        return _place_remedies(loaded, result)


def _guarded(fn, parameter: str, subject: str, current, *args) -> Remedy:
    """One remedy, or a "not solved" entry when the run's evaluation budget is spent."""
    try:
        return fn(*args)
    except _BudgetSpent:
        return Remedy(parameter, subject, current, None, "not solved", None,
                      f"{subject}: not solved here (this run's {EVALUATION_BUDGET} re-evaluations were spent on the "
                      "answers above; change one thing and evaluate again)")


def _place_remedies(loaded, result: EvaluationResult) -> tuple[PlaceRemedies, ...]:
    st = loaded.model
    out = []
    for pr in result.places:
        if pr.verdict != "exceeds":
            continue
        place = next(p for p in st.places if p.label == pr.label)
        base = _only_place(loaded, pr.label)

        def ratio_of_loaded(modified, _label=pr.label):
            return total_ratio(modified, _label)

        r_now = pr.total_ratio
        shares = sorted(pr.contributions, key=lambda s: -s.exposure_ratio)
        cres_by_id = {c.id: c for c in result.configurations}
        remedies: list[Remedy] = []
        for s in shares:
            tx = next(t for t in st.transmitters if t.id == s.transmitter)
            remedies.append(_guarded(_pep_remedy, "pep_w", f"transmitter {tx.id}", tx.pep_w,
                                     base, tx, ratio_of_loaded, r_now))
        for s in shares:
            cres = cres_by_id[s.configuration]
            subject = f"configuration {cres.id}"
            remedies.append(_guarded(_duty_remedy, "avg_power_w", subject, cres.avg_power_w[pr.environment],
                                     base, cres, pr.environment, ratio_of_loaded, r_now))
            remedies.append(_guarded(_schedule_remedy, "schedule_on_minutes", subject, None,
                                     base, cres, pr.environment, ratio_of_loaded, r_now))
            remedies.append(_guarded(_loss_remedy, "line_loss_db", subject, cres.line_loss_db,
                                     base, cres, ratio_of_loaded, r_now))
        seen = []
        for s in shares:
            ant = next(a for a in st.antennas if a.id == cres_by_id[s.configuration].antenna)
            if ant.id not in seen:
                seen.append(ant.id)
                remedies.append(_guarded(_height_remedy, "antenna_height_m", f"antenna {ant.id}", ant.height_m,
                                         base, ant, ratio_of_loaded, r_now))
        dominant = next(a for a in st.antennas if a.id == cres_by_id[shares[0].configuration].antenna)
        remedies.append(_guarded(_distance_remedy, "distance_m", f"place {place.label}", None,
                                 base, place, dominant, ratio_of_loaded, r_now))
        out.append(PlaceRemedies(place=pr.label, environment=pr.environment, total_ratio=r_now,
                                 remedies=tuple(remedies)))
    return tuple(out)


def configuration_remedies(loaded, result: EvaluationResult) -> tuple[ConfigurationRemedies, ...]:
    """Per configuration: the largest PEP and average power, the schedule, the line loss and the antenna
    height with which every place complies (everything else unchanged). Where the station complies
    already, PEP and average power are the headroom. Empty without places."""
    with _reused_evaluations():
        return _configuration_remedies(loaded, result)


def _configuration_remedies(loaded, result: EvaluationResult) -> tuple[ConfigurationRemedies, ...]:
    if not result.places:
        return ()
    st = loaded.model
    worst = max(p.total_ratio for p in result.places)
    worst_env = max(result.places, key=lambda p: p.total_ratio).environment

    def ratio_of_loaded(modified):
        return total_ratio(modified)

    out = []
    pep: dict = {}       # a transmitter's PEP and an antenna's height are shared by its configurations
    height: dict = {}
    for cres in result.configurations:
        tx = next(t for t in st.transmitters if t.id == cres.transmitter)
        ant = next(a for a in st.antennas if a.id == cres.antenna)
        subject = f"configuration {cres.id}"
        if tx.id not in pep:
            pep[tx.id] = _guarded(_pep_remedy, "pep_w", f"transmitter {tx.id}", tx.pep_w,
                                  loaded, tx, ratio_of_loaded, worst)
        if ant.id not in height:
            height[ant.id] = _guarded(_height_remedy, "antenna_height_m", f"antenna {ant.id}", ant.height_m,
                                      loaded, ant, ratio_of_loaded, worst)
        rem = [pep[tx.id],
               _guarded(_duty_remedy, "avg_power_w", subject, cres.avg_power_w[worst_env],
                        loaded, cres, worst_env, ratio_of_loaded, worst),
               _guarded(_schedule_remedy, "schedule_on_minutes", subject, None,
                        loaded, cres, worst_env, ratio_of_loaded, worst),
               _guarded(_loss_remedy, "line_loss_db", subject, cres.line_loss_db, loaded, cres, ratio_of_loaded, worst),
               height[ant.id]]
        out.append(ConfigurationRemedies(configuration=cres.id, transmitter=tx.id, antenna=ant.id,
                                         remedies=tuple(rem)))
    return tuple(out)


def largest_pep_w(loaded, label: str | None = None) -> tuple[str, float | None, float | None]:
    """Largest PEP of the station's only transmitter with which a place (or every place) complies.

    Returns (status, pep_w, ratio at pep_w); see :func:`place_remedies` for the method.
    """
    st = loaded.model
    if len(st.transmitters) != 1:
        raise ValueError("largest_pep_w needs a station with one transmitter")
    tx = st.transmitters[0]
    r_now = total_ratio(loaded, label)
    return _power_like(lambda x: total_ratio(_set_pep(loaded, tx.id, x), label), tx.pep_w, r_now, None)


# --------------------------------------------------------------------------------------------------
# ground-level keep-out


def _levels(loaded) -> list[tuple[str, tuple[float, ...]]]:
    levels = [(f"standing person ({BODY_HEIGHTS_M[0]:g}-{BODY_HEIGHTS_M[-1]:g} m)", BODY_HEIGHTS_M)]
    upper = sorted({z for p in loaded.model.places for z in (p.body_heights_m or [p.height_m])
                    if z > BODY_HEIGHTS_M[-1] + 0.5})
    levels += [(f"declared place height {z:g} m", (z,)) for z in upper]
    return levels


def _directions(ant) -> list[float]:
    """Bearings [deg] examined: one where the gain toward a place is the same in every direction."""
    if ant.kind == "wire" or ant.use_pattern or ant.kind == "table":
        return [ant.azimuth_deg + k * 45.0 for k in range(8)]
    return [ant.azimuth_deg]


def ground_keep_out(loaded, result: EvaluationResult, emitters) -> tuple[GroundKeepOut, ...]:
    """Horizontal keep-out distance from each antenna's foot, per configuration alone, per environment.

    At each level (a standing person, 0.5-2 m, and every declared place height above it), along each
    examined bearing, the exposure of a person is evaluated as at a declared place (same gain, same
    far-field estimate or moment-method near field) on :data:`_KEEP_OUT_STEPS` steps out to a distance beyond which the
    peak-gain far-field estimate is below the limit, and the last step above the limit is refined.
    """
    from rfsafe.assess import place_ratios

    out = []
    by_id = {c.id: c for c in result.configurations}
    for em in emitters:
        cres = by_id[em.configuration]
        ant = em.antenna
        nf = max(cres.near_field_distance_m, cres.aperture_far_field_m or 0.0)
        bearings = _directions(ant)
        for d in cres.compliance_distances:
            env = d.environment
            reach = max(d.dist_m, nf if em.solution is not None else 0.0) * 1.05 + 0.05
            for level, heights in _levels(loaded):

                def ratios_at(rs, bearings, _env=env, _heights=heights):
                    """Ratios at horizontal distances ``rs`` along each bearing (bearing-major), evaluated together."""
                    xs = [em.x_m + r * math.sin(math.radians(b)) for b in bearings for r in rs]
                    ys = [em.y_m + r * math.cos(math.radians(b)) for b in bearings for r in rs]
                    vals = [float(q) for q in place_ratios(em, loaded, cres, _env, xs, ys, _heights)]
                    for k, (x, y) in enumerate(zip(xs, ys)):   # at the antenna's centre: unbounded
                        # (a place 2 mm or more from it horizontally is 1 mm or more from it: not tested further)
                        if abs(x - em.x_m) < 2e-3 and abs(y - em.y_m) < 2e-3 and any(
                                math.dist((x, y, z), (em.x_m, em.y_m, em.height_m)) < 1e-3 for z in _heights):
                            vals[k] = math.inf
                    return vals

                keep = 0.0
                method = "far-field estimate"
                if not math.isfinite(reach):
                    out.append(GroundKeepOut(configuration=em.configuration, antenna=ant.id, environment=env,
                                             level=level, heights_m=tuple(heights), keep_out_m=math.inf,
                                             compliance_dist_m=d.dist_m, directions=0, method=method,
                                             text=f"{em.configuration} ({env}), {level}: no keep-out distance "
                                                  "(the compliance distance is not finite)"))
                    continue
                n = _KEEP_OUT_STEPS
                rs = [reach * k / n for k in range(n + 1)]
                scan = ratios_at(rs, bearings)
                for j, bearing in enumerate(bearings):
                    ratios = scan[j * (n + 1):(j + 1) * (n + 1)]
                    over = [k for k, q in enumerate(ratios) if q > 1.0]
                    if not over:
                        continue
                    k = over[-1]
                    if k == n:   # cannot happen beyond the peak-gain far-field reach; keep the bound
                        keep = max(keep, reach)
                        continue
                    r_ok, _ = solve_crossing(lambda r, b=bearing: ratios_at([r], [b])[0], rs[k + 1], ratios[k + 1],
                                             max(rs[k], 1e-6), ratios[k], log_x=False)
                    keep = max(keep, r_ok)
                if em.solution is not None and keep < nf:
                    method = "moment-method near field inside lambda/2pi, far-field estimate beyond"
                dz = min(abs(z - em.height_m) for z in heights)
                text = (f"{em.configuration} ({env}), {level}: keep out to {keep:.2f} m horizontally from the foot of "
                        f"{ant.id}" if keep > 0 else
                        f"{em.configuration} ({env}), {level}: no keep-out needed (closest height {dz:.2f} m "
                        "above or below the antenna)")
                out.append(GroundKeepOut(configuration=em.configuration, antenna=ant.id, environment=env,
                                         level=level, heights_m=tuple(heights), keep_out_m=keep,
                                         compliance_dist_m=d.dist_m, directions=len(bearings), method=method,
                                         text=text))
    return tuple(out)


def with_answers(loaded, *, remedies: bool = True, near_field_maps: bool = True) -> EvaluationResult:
    """Evaluate a station and add its ground-level keep-out distances and (optionally) remedies.

    ``near_field_maps=False`` leaves out the plot data (wire near-field maps, the keep-out plan) for
    output that draws none; every exposure, distance and verdict is the same.
    """
    from rfsafe.assess import assess_with_emitters

    memo: dict = {}
    result, ems = assess_with_emitters(loaded, near_field_maps=near_field_maps, memo=memo if remedies else None)
    keep = ground_keep_out(loaded, result, ems)
    if not remedies:
        return dataclasses.replace(result, ground_keep_out=keep)
    _budget[:] = [EVALUATION_BUDGET]
    try:
        with _reused_evaluations(memo):
            places = place_remedies(loaded, result)
            configs = configuration_remedies(loaded, result)
    finally:
        _budget.clear()
    return dataclasses.replace(result, ground_keep_out=keep, place_remedies=places, configuration_remedies=configs)


# --------------------------------------------------------------------------------------------------
# sites


def _site_jump_note(r: float | None) -> str:
    """Said of a solved site move whose ratio stops short of the limit: the samples next to an antenna and along
    its bearing move with it, and where one crosses a region's edge the sampled worst ratio jumps."""
    if r is None or r >= 1.0 - RATIO_TOLERANCE:
        return ""
    return (f" (the sampled ratio jumps there, to {r:.3g}, as a sample that moves with the antenna crosses a "
            "region's edge)")


def site_remedies(res) -> tuple:
    """For every violation of a site review and every transmitter: the power cut and the move that clear it.

    Solved with the site review's own kernel (:func:`rfsafe.site.grid.ratio_grid`, every transmitter's
    worst configuration summed, worst height) over the points the review checks in the violated region
    (:func:`rfsafe.site.analysis.region_samples`),
    one transmitter changed at a time: all its configurations' power scaled by one factor, or its
    antennas moved together straight away from the violation's worst point (scan, then refined).
    """
    import numpy as np

    from rfsafe.results import SiteRemedy
    from rfsafe.site.constants import ENVIRONMENTS
    from rfsafe.site.analysis import region_samples
    from rfsafe.site.grid import ratio_grid

    if not res.violations or res.grid is None:
        return ()
    out = []
    ems = list(res.emitters)
    for v in res.violations:
        e = ENVIRONMENTS.index(v.environment)

        samples: dict = {}

        def worst(emitters, _region=v.region, _e=e, _samples=samples):
            # the points the site review checks, for these emitters (the fine samples follow a moved antenna;
            # they depend on the antennas' positions only, so a power change reuses them)
            key = tuple((em.x_m, em.y_m) for em in emitters)
            if key not in _samples:
                _samples.clear()
                _samples[key] = region_samples(emitters, res.grid, res.boundary, res.areas, _region)
            px, py = _samples[key]
            ratio = ratio_grid(emitters, px, py, res.heights_m).ratio[_e]
            return float(np.max(ratio)) if ratio.size else 0.0

        r_now = worst(ems)
        for t in res.transmitters:
            name = t.transmitter
            mine = [k for k, em in enumerate(ems) if em.transmitter == name]

            def scaled(f, _mine=mine):
                return worst([dataclasses.replace(em, power_w=tuple(p * f for p in em.power_w)) if k in _mine else em
                              for k, em in enumerate(ems)])

            p_status, factor, r_pow = _power_like(scaled, 1.0, r_now, 1.0)
            dx, dy = t.x_m - v.x_m, t.y_m - v.y_m
            if dx == 0.0 and dy == 0.0:
                # the worst point is at the antenna itself (in the region): away from the middle of the region's
                # points, or east where that is the antenna's position too
                px, py = region_samples(ems, res.grid, res.boundary, res.areas, v.region)
                dx, dy = t.x_m - float(np.mean(px)), t.y_m - float(np.mean(py))
                if dx == 0.0 and dy == 0.0:
                    dx = 1.0
            norm = math.hypot(dx, dy) or 1.0
            ux, uy = dx / norm, dy / norm

            def moved(d, _mine=mine, _ux=ux, _uy=uy):
                return worst([dataclasses.replace(em, x_m=em.x_m + _ux * d, y_m=em.y_m + _uy * d) if k in _mine else em
                              for k, em in enumerate(ems)])

            m_status, move, r_move = _scan_out(moved, 0.0, DISTANCE_STEPS_M, r_now)
            power_text = ("no power cut of this station alone clears it" if p_status != "solved" else
                          f"cut its power to {factor:.3g} x today ({10 * math.log10(factor):.1f} dB)")
            move_text = ("no move up to {:g} m clears it".format(DISTANCE_STEPS_M[-1]) if m_status != "solved" else
                         f"or move its antennas {move:.1f} m straight away from ({v.x_m:.1f}, {v.y_m:.1f}) m"
                         + _site_jump_note(r_move))
            out.append(SiteRemedy(
                violation=v.region, environment=v.environment, transmitter=name,
                power_factor=factor if p_status == "solved" else None, power_status=p_status,
                move_m=move if m_status == "solved" else None, move_status=m_status,
                ratio_after_power=r_pow, ratio_after_move=r_move,
                text=f"{v.region!r}: {name}: {power_text}; {move_text}"))
    return tuple(out)
