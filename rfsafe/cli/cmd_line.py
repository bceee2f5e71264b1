"""`rfsafe line`: feedline loss and the voltage/current stress of line, connectors and tuner."""

from __future__ import annotations

import math
import re

import typer

from rfsafe.errors import InputError, bad_value

_CAUTION = ("Caution: RF voltages on a feedline and in a matching network can burn and can arc; these are "
            "estimates from generic cable figures (many marked 'from memory') under stated assumptions. "
            "Use the ratings of your own parts; local regulation and licensed practice govern.")

#: Library field names -> the option the user typed.
_FIELD_TO_OPTION = {
    "line.pep_w": "--pep-w", "line.avg_power_w": "--duty-factor", "line.freq_hz": "--freq-mhz",
    "line.length_m": "--length-m", "line.swr": "--swr", "line.load_ohm": "--load-ohm",
    "line.connector_v_peak_rating": "--connector-v-peak", "line.connector": "--connector",
    "line.tuner.loaded_q": "--q", "line.tuner.inductor_q": "--inductor-q",
    "line.tuner.capacitor_max_voltage_v_peak": "--capacitor-v-peak",
    "line.tuner.inductor_max_current_a_rms": "--inductor-a-rms", "line.tuner.load_ohm": "--load-ohm",
    "line.tuner.l_form": "--l-form", "line.tuner": "--tuner",
    "line.tuner.c1_pf": "--c1-pf", "line.tuner.l_uh": "--l-uh", "line.tuner.c2_pf": "--c2-pf",
    "line.tuner.capacitor_range_pf": "--capacitor-range-pf", "line.tuner.inductor_range_uh": "--inductor-range-uh",
    "line.tuner.matchable_region": "--matchable-region",
    "line.connector_at_transmitter": "--connector-tx", "line.connector_at_antenna": "--connector-ant",
    "line.balun.ratio": "--balun", "line.balun.location": "--balun-at", "line.balun.power_rating_w": "--balun-power-w",
    "line.balun.loss_db": "--balun-loss-db",
    "cable.z0_ohm": "--z0-ohm", "cable.loss_db_per_100m": "--loss-db-per-100m",
    "cable.velocity_factor": "--vf", "cable.max_voltage_v_peak": "--max-voltage-v-peak",
}

_NUM = r"(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
#: R alone; R+jX, R-jX, R+Xj, R-Xj; jX, -jX, Xj, -Xj (pure reactance: refused later for R = 0).
_IMPEDANCE_RE = re.compile(
    rf"^(?:(?P<r>[+-]?{_NUM})(?:(?P<s>[+-])(?:j(?P<x1>{_NUM})|(?P<x2>{_NUM})j))?"
    rf"|(?P<ps>[+-]?)(?:j(?P<px1>{_NUM})|(?P<px2>{_NUM})j))$")
IMPEDANCE_ACCEPTED = ("is not an impedance (accepted: R, R+jX, R-jX, R+Xj or R-Xj in ohm, "
                      "e.g. 50, 600-j900, 73+42.5j)")


def parse_impedance(text: str, *, option: str = "--load-ohm") -> complex:
    """Parse an impedance in ohm written as engineers write it.

    Accepted: ``50``, ``600-j900``, ``600-900j``, ``73+j42.5``, ``73 + 42.5j``, ``-j10``, ``10j``
    (spaces ignored). Anything else (``i`` for the imaginary unit, two signs, ``j`` alone) raises
    InputError naming ``option``.

    Examples
    --------
    >>> parse_impedance("600-j900"), parse_impedance("600-900j"), parse_impedance("-j10")
    ((600-900j), (600-900j), -10j)
    """
    s = text.replace(" ", "")
    m = _IMPEDANCE_RE.match(s)
    if not m:
        raise bad_value(option, text, IMPEDANCE_ACCEPTED)
    if m["r"] is not None:
        x = m["x1"] or m["x2"]
        z = complex(float(m["r"]), 0.0 if x is None else float(m["s"] + x))
    else:
        z = complex(0.0, float((m["ps"] or "+") + (m["px1"] or m["px2"])))
    if not (math.isfinite(z.real) and math.isfinite(z.imag)):
        raise bad_value(option, text, "is not a finite impedance")
    return z


def parse_range(text: str, *, option: str, unit: str) -> tuple[float, float]:
    """``"10,500"`` -> (10.0, 500.0); InputError naming ``option`` for anything else."""
    parts = text.split(",")
    try:
        lo, hi = (float(v) for v in parts)
    except ValueError:
        raise bad_value(option, text, f"is not a range (accepted: MIN,MAX in {unit}, e.g. 10,500)") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise bad_value(option, text, f"is not a range (accepted: MIN,MAX in {unit} with 0 < MIN < MAX)")
    return lo, hi


def region_map(region, mark_ohm: complex | None = None) -> str:
    """A text map of a matchable region: rows of reactance (top: most inductive), columns of resistance;
    ``#`` matchable, ``.`` not, ``@`` the load the tuner sees (nearest grid cell)."""
    r, x = region.r_ohm, region.x_ohm
    mark = None
    if mark_ohm is not None:
        kr = min(range(len(r)), key=lambda k: abs(math.log(r[k] / mark_ohm.real)) if mark_ohm.real > 0 else 0)
        kx = min(range(len(x)), key=lambda i: abs(x[i] - mark_ohm.imag))
        mark = (kx, kr)
    lines = [f"Loads a T network with C {region.capacitor_range_pf[0]:g}-{region.capacitor_range_pf[1]:g} pF and "
             f"L {region.inductor_range_uh[0]:g}-{region.inductor_range_uh[1]:g} uH can match to "
             f"{region.target_resistance_ohm:g} ohm at {region.freq_hz / 1e6:g} MHz "
             f"(# matchable, . not{', @ the load it sees (nearest cell)' if mark else ''}; ranges: {region.range_source})"]
    for i in range(len(x) - 1, -1, -1):
        row = "".join("@" if mark == (i, k) else ("#" if region.matchable[i][k] else ".") for k in range(len(r)))
        lines.append(f"  X {x[i]:+8.0f} ohm |{row}|")
    lines.append(f"  {'':14}R {r[0]:g} ohm (left) to {r[-1]:g} ohm (right), log scale")
    lines.append(f"  method: {region.method}")
    return "\n".join(lines)


def _remap(err: InputError) -> InputError:
    msg = str(err)
    head, sep, rest = msg.partition(": ")
    if sep and head in _FIELD_TO_OPTION:
        return InputError(f"{_FIELD_TO_OPTION[head]}: {rest}")
    return err


def _fmt(x: float, unit: str = "", digits: int = 4) -> str:
    if x is None:
        return "-"
    if isinstance(x, float) and math.isinf(x):
        return "not reached"
    return f"{x:.{digits}g}{(' ' + unit) if unit else ''}"


def line(
    pep_w: float = typer.Option(..., "--pep-w", help="Peak envelope power into the line (or tuner) [W]."),
    freq_mhz: float = typer.Option(..., "--freq-mhz", help="Frequency [MHz]."),
    length_m: float = typer.Option(..., "--length-m", help="Line length [m]."),
    cable: str = typer.Option(None, "--cable", help="Cable class id (e.g. rg-213, window-450)."),
    z0_ohm: float = typer.Option(None, "--z0-ohm", help="Custom line: characteristic impedance [ohm]."),
    loss_db_per_100m: float = typer.Option(None, "--loss-db-per-100m",
                                           help="Custom line: matched loss at --freq-mhz [dB/100 m]."),
    vf: float = typer.Option(None, "--vf", help="Custom line: velocity factor (0-1]."),
    max_voltage_v_peak: float = typer.Option(None, "--max-voltage-v-peak",
                                             help="Custom line: peak voltage rating [V]."),
    swr: float = typer.Option(None, "--swr", help="SWR at the antenna end (load phase unknown: worst case)."),
    load_ohm: str = typer.Option(None, "--load-ohm", help="Impedance at the antenna end [ohm], e.g. 600-j900 or 600-900j."),
    tuner: str = typer.Option(None, "--tuner", help="Matching network: l, pi or t (series C, shunt L, series C)."),
    tuner_at: str = typer.Option("transmitter", "--tuner-at", help="Network position: transmitter or antenna."),
    q: float = typer.Option(None, "--q", help="Loaded Q of a pi or T network (default 10; T: at least 1.2 x the "
                                              "least Q that matches)."),
    c1_pf: float = typer.Option(None, "--c1-pf", help="T network as set: source-side capacitor [pF]."),
    l_uh: float = typer.Option(None, "--l-uh", help="T network as set: shunt inductor [uH]."),
    c2_pf: float = typer.Option(None, "--c2-pf", help="T network as set: load-side capacitor [pF]."),
    capacitor_range_pf: str = typer.Option(None, "--capacitor-range-pf",
                                           help="The tuner's capacitor range MIN,MAX [pF] (parts outside are flagged)."),
    inductor_range_uh: str = typer.Option(None, "--inductor-range-uh",
                                          help="The tuner's inductor range MIN,MAX [uH] (parts outside are flagged)."),
    matchable_region: bool = typer.Option(False, "--matchable-region",
                                          help="T network: print the loads it can match with its part ranges."),
    inductor_q: float = typer.Option(100.0, "--inductor-q", help="Inductor unloaded Q (default 100)."),
    capacitor_v_peak: float = typer.Option(None, "--capacitor-v-peak", help="Capacitor rating [V peak]."),
    inductor_a_rms: float = typer.Option(None, "--inductor-a-rms", help="Inductor rating [A rms]."),
    l_form: str = typer.Option(None, "--l-form", help="L network form (low-pass, high-pass, ...)."),
    connector: str = typer.Option(None, "--connector", help="Connector series at both ends of a coax line: uhf, n, bnc."),
    connector_tx: str = typer.Option(None, "--connector-tx", help="Connector at the transmitter end only (or none)."),
    connector_ant: str = typer.Option(None, "--connector-ant", help="Connector at the antenna end only (or none)."),
    balun: str = typer.Option(None, "--balun", help="Balun impedance ratio, balanced side first: 1:1, 4:1, 9:1."),
    balun_at: str = typer.Option(None, "--balun-at", help="Balun location: transmitter or antenna (default: "
                                                         "transmitter on a balanced line, else antenna)."),
    balun_power_w: float = typer.Option(None, "--balun-power-w", help="Balun power rating at its design impedance [W]."),
    balun_loss_db: float = typer.Option(0.0, "--balun-loss-db", help="Balun matched loss [dB] (default 0)."),
    connector_v_peak: float = typer.Option(None, "--connector-v-peak", help="Connector rating [V peak]."),
    duty_factor: float = typer.Option(1.0, "--duty-factor",
                                      help="Average / peak envelope power for heating (default 1.0, conservative)."),
    exact_z0: bool = typer.Option(False, "--exact-z0", help="Use the complex Z0 = R0(1 - j alpha/beta) model."),
    json_out: bool = typer.Option(False, "--json", help="Print the result as JSON."),
    wide: bool = typer.Option(False, "--wide", help="Do not fit tables and text to 100 columns."),
) -> None:
    """Loss, SWR at both ends and the peak voltage/current on a feedline, its connectors and a tuner."""
    from rfsafe.cli import output

    output.set_wide(wide)
    from rfsafe.feedline import cable_class, custom_cable, evaluate_line
    from rfsafe.feedline.balun import BalunSpec, parse_balun_ratio
    from rfsafe.feedline.matching import TunerSpec

    if not (math.isfinite(freq_mhz) and freq_mhz > 0):
        raise bad_value("--freq-mhz", freq_mhz, "must be a finite number > 0 MHz")
    if not (math.isfinite(duty_factor) and 0 < duty_factor <= 1):
        raise bad_value("--duty-factor", duty_factor, "must be > 0 and <= 1")
    custom = {"--z0-ohm": z0_ohm, "--loss-db-per-100m": loss_db_per_100m, "--vf": vf}
    given = [k for k, v in custom.items() if v is not None]
    if cable is not None and given:
        raise bad_value("--cable", cable, f"cannot be combined with {', '.join(given)} (give a class or a custom line)")
    if cable is None and not given:
        raise InputError("--cable: none given; give --cable CLASS or --z0-ohm, --loss-db-per-100m and --vf")
    if (swr is None) == (load_ohm is None):
        raise InputError("--swr/--load-ohm: " + ("both given" if swr is not None else "none given")
                         + "; give exactly one (SWR at the antenna end, or the antenna-end impedance)")
    if tuner is not None and tuner not in ("l", "pi", "t"):
        raise bad_value("--tuner", tuner, 'is not a known network (known: "l", "pi", "t")')
    if tuner_at not in ("transmitter", "antenna"):
        raise bad_value("--tuner-at", tuner_at, 'is not a known position (known: "transmitter", "antenna")')
    if q is not None and tuner not in ("pi", "t"):
        raise bad_value("--q", q, "applies to --tuner pi or t only")
    for opt, val in (("--c1-pf", c1_pf), ("--l-uh", l_uh), ("--c2-pf", c2_pf), ("--matchable-region", matchable_region
                                                                               or None)):
        if val is not None and tuner != "t":
            raise bad_value(opt, val, "applies to --tuner t only")
    for opt, val in (("--capacitor-range-pf", capacitor_range_pf), ("--inductor-range-uh", inductor_range_uh)):
        if val is not None and tuner is None:
            raise bad_value(opt, val, "describes a tuner: give --tuner")
    c_range = None if capacitor_range_pf is None else parse_range(capacitor_range_pf, option="--capacitor-range-pf",
                                                                   unit="pF")
    l_range = None if inductor_range_uh is None else parse_range(inductor_range_uh, option="--inductor-range-uh",
                                                                 unit="uH")
    for opt, val in (("--balun-at", balun_at), ("--balun-power-w", balun_power_w)):
        if val is not None and balun is None:
            raise bad_value(opt, val, "describes a balun: give --balun")
    for opt, val in (("--inductor-q", inductor_q), ("--q", q)):
        if val is not None and not (math.isfinite(val) and val > 0):
            raise bad_value(opt, val, "must be a finite number > 0")
    try:
        if cable is not None:
            line_cable = cable_class(cable, field="--cable")
            from rfsafe.feedline.catalogue import check_catalogue_frequency

            check_catalogue_frequency(line_cable, freq_mhz, field="--freq-mhz")
        else:
            missing = [k for k, v in custom.items() if v is None]
            if missing:
                raise InputError(f"{missing[0]}: missing; a custom line needs --z0-ohm, --loss-db-per-100m and --vf")
            line_cable = custom_cable(z0_ohm=z0_ohm, loss_db_per_100m=loss_db_per_100m, freq_hz=freq_mhz * 1e6,
                                      velocity_factor=vf, max_voltage_v_peak=max_voltage_v_peak)
        load = None if load_ohm is None else parse_impedance(load_ohm)
        spec = None if tuner is None else TunerSpec(
            topology=tuner, position=tuner_at, loaded_q=q, inductor_q=inductor_q,
            capacitor_max_voltage_v_peak=capacitor_v_peak, inductor_max_current_a_rms=inductor_a_rms, l_form=l_form,
            c1_pf=c1_pf, l_uh=l_uh, c2_pf=c2_pf, capacitor_range_pf=c_range, inductor_range_uh=l_range,
            matchable_region=matchable_region)
        balun_spec = None
        if balun is not None:
            where = balun_at if balun_at is not None else ("transmitter" if line_cable.balanced else "antenna")
            balun_spec = BalunSpec(ratio=parse_balun_ratio(balun, field="--balun"), location=where,
                                   power_rating_w=balun_power_w, loss_db=balun_loss_db, label=balun.strip())
        if not (math.isfinite(pep_w) and pep_w > 0):
            raise bad_value("--pep-w", pep_w, "must be a finite number > 0 W")
        result = evaluate_line(pep_w=pep_w, avg_power_w=pep_w * duty_factor, freq_hz=freq_mhz * 1e6,
                               cable=line_cable, length_m=length_m, swr=swr, load_ohm=load, connector=connector,
                               connector_v_peak_rating=connector_v_peak, connector_at_transmitter=connector_tx,
                               connector_at_antenna=connector_ant, balun=balun_spec, tuner=spec,
                               exact_complex_z0=exact_z0,
                               field="line")
    except InputError as err:
        raise _remap(err) from None

    if json_out:
        output.print_json(result)
    else:
        r = result
        zin = r.input_impedance_ohm
        rows = [
            ("cable", r.cable_id), ("matched loss", _fmt(r.matched_loss_db, "dB")),
            ("total loss", _fmt(r.total_loss_db, "dB")), ("loss model", r.loss_model),
            ("SWR at antenna", _fmt(r.swr_at_antenna)), ("SWR at transmitter", _fmt(r.swr_at_transmitter)),
            ("input impedance", f"{zin.real:.4g} {'+' if zin.imag >= 0 else '-'} j{abs(zin.imag):.4g} ohm"),
            ("power at antenna (PEP)", _fmt(r.power_at_antenna_w, "W")),
            ("line dissipation (average)", _fmt(r.line_dissipation_avg_w, "W")),
            ("max line voltage", f"{_fmt(r.line_voltage_v_peak, 'V peak')} / {_fmt(r.line_voltage_v_rms, 'V rms')}"
                                 f" at {r.line_voltage_max_position_m:.3g} m from transmitter"),
            ("max line current", f"{_fmt(r.line_current_a_peak, 'A peak')} / {_fmt(r.line_current_a_rms, 'A rms')}"
                                 f" at {r.line_current_max_position_m:.3g} m from transmitter"),
            ("voltage at transmitter end", _fmt(r.voltage_at_transmitter_v_peak, "V peak")),
            ("voltage at antenna end", _fmt(r.voltage_at_antenna_v_peak, "V peak")),
            ("connectors", f"transmitter end: {r.connector_at_transmitter or 'none'}, "
                           f"antenna end: {r.connector_at_antenna or 'none'}"),
        ]
        if r.balun is not None:
            b = r.balun
            rows += [
                (f"balun {b.label} at the {b.location}",
                 f"{_fmt(b.voltage_balanced_v_peak, 'V peak')}, {_fmt(b.current_balanced_a_peak, 'A peak')} balanced; "
                 f"{_fmt(b.voltage_unbalanced_v_peak, 'V peak')}, {_fmt(b.current_unbalanced_a_peak, 'A peak')} "
                 "unbalanced"),
                ("balun equivalent power", f"{_fmt(b.equivalent_power_w, 'W')} (by its {b.governing}, at "
                                           f"{b.design_unbalanced_ohm:g}/{b.design_balanced_ohm:g} ohm)"),
                ("balun heat (average, est.)", f"{_fmt(b.dissipation_avg_w, 'W')} from {b.loss_db:g} dB matched loss"),
            ]
        typer.echo(output.format_table(["quantity", "value"], rows, title="Feedline", align="ll"))
        from rfsafe.verification import LEGEND, marker

        prow = [(p.part, p.quantity, _fmt(p.stress),
                 _fmt(p.rating) + ("" if p.rating is None else f" {marker(p.rating_verification)}"), p.unit,
                 _fmt(p.headroom, digits=3),
                 ("none (SWR 1 exceeds)" if p.largest_tolerable_swr is None
                  and p.tolerable_swr_note.startswith("rating exceeded even with a matched line")
                  else _fmt(p.largest_tolerable_swr, digits=3)), p.status)
                for p in r.part_stresses]
        typer.echo("")
        typer.echo(output.format_table(["part", "quantity", "stress", "rating", "unit", "headroom",
                                        "largest SWR", "status"], prow, title="Ratings at this power"))
        typer.echo(output.fit_text(f"rating {LEGEND}"))
        typer.echo(output.fit_text(f"Fails first: {r.first_failure}"))
        if r.tuner is not None:
            n = r.tuner.network
            trow = [(p.name, p.kind, p.placement,
                     (_fmt(p.value_pf, "pF") if p.value_pf else _fmt(p.value_uh, "uH")) + (" !" if p.range_flag else ""),
                     _fmt(p.voltage_v_peak), _fmt(p.voltage_v_rms), _fmt(p.current_a_rms), _fmt(p.loss_w))
                    for p in n.parts]
            typer.echo("")
            typer.echo(output.format_table(["part", "kind", "placement", "value", "V peak", "V rms", "A rms",
                                            "loss W"], trow,
                                           title=f"{n.topology.upper()} network ({n.form}) at the {r.tuner.position}, "
                                                 f"loss {n.loss_db:.3g} dB", align="llllrrrr"))
            if n.loaded_q is not None:
                typer.echo(f"  loaded Q {n.loaded_q:.3g}: {n.q_definition}")
            for flag in n.range_flags:
                typer.echo(f"  ! {flag}")
            zt = n.input_impedance_ohm
            typer.echo(f"  input impedance {zt.real:.4g} {'+' if zt.imag >= 0 else '-'} j{abs(zt.imag):.4g} ohm; "
                       f"SWR seen by the transmitter {r.swr_seen_by_transmitter:.3g}")
            if r.tuner.matchable_region is not None:
                typer.echo("")
                typer.echo(region_map(r.tuner.matchable_region, n.load_ohm))
        output.warn(f"Load: {r.load_assumption}.")
        output.warn(f"Heating: {r.thermal_rule}.")
        for note in r.notes:
            output.warn(f"Note: {note}.")
        output.warn(_CAUTION)
    raise typer.Exit(1 if result.exceeded_parts else 0)


def register(app: typer.Typer) -> None:
    """Add the ``line`` command to the app."""
    app.command("line")(line)
