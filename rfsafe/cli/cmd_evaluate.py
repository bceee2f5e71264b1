"""``rfsafe evaluate``: evaluate a station file and print tables (or JSON)."""

from __future__ import annotations

from pathlib import Path

import typer

from rfsafe.cli.output import compact_number
from rfsafe.errors import bad_value


#: Methods as the 100-column exposure table names them (the full name is in --wide, JSON and CSV).
_SHORT_METHOD = {"far-field estimate": "far field", "far-field estimate (>= moment method)": "far field (>= MoM)",
                 "near-field (moment method)": "MoM near field",
                 "near-field (moment method, spatial average over body heights)": "MoM, body average"}


#: Places per piece when a table of many places is written as CSV (each piece's rows are built, written and
#: dropped before the next: 10,000 places x 50 configurations never hold 500,000 rows at once).
CSV_PLACES_PER_PIECE = 500


def write_csv(res, table: str) -> None:
    """Print one table of ``res`` as CSV; the places and exposures tables of many places in pieces of
    :data:`CSV_PLACES_PER_PIECE` places (the same text as in one piece)."""
    from types import SimpleNamespace

    from rfsafe.cli import answers

    places = res.places
    if table not in ("places", "exposures") or len(places) <= CSV_PLACES_PER_PIECE:
        typer.echo(answers.evaluation_frame(res, table).to_csv(index=False), nl=False)
        return
    for k in range(0, len(places), CSV_PLACES_PER_PIECE):
        piece = SimpleNamespace(places=places[k:k + CSV_PLACES_PER_PIECE])
        typer.echo(answers.evaluation_frame(piece, table).to_csv(index=False, header=k == 0), nl=False)


def render_evaluation(res) -> str:
    """Human-readable tables of an EvaluationResult."""
    return "\n".join(render_blocks(res))


def render_blocks(res):
    """The lines of :func:`render_evaluation` in blocks (one table at a time), so that a large evaluation's
    text is printed table by table instead of held whole."""
    from rfsafe.cli.output import format_table, is_narrow
    from rfsafe.verification import MARKERS, marker, weakest as weakest_state

    out = []
    out.append(f"{res.title}")
    ident = [f"station: {res.station or '-'}", f"evaluator: {res.evaluator or '-'}",
             f"date: {res.evaluation_date} ({'from file' if res.evaluation_date_source == 'file' else 'today'})",
             f"standard: {res.standard_name}",
             f"ground reflection: {res.ground_reflection} (F = {res.ground_factor:g})",
             f"input: {res.input_file} sha256 {res.input_sha256[:16]}..."]
    out.append("  " + "\n  ".join(ident))
    out.append("")
    narrow = is_narrow()   # fitted to 100 columns: feet, E, H and the environment column only with --wide
    rows = []
    for c in res.configurations:
        dist = {d.environment: d for d in c.compliance_distances}
        rows.append([c.id, f"{c.freq_mhz:g}", c.mode, compact_number(c.pep_w),
                     f"{c.duty_factor:g} {marker(c.duty_factor_verification)}",
                     f"{c.transmit_fraction['controlled']:.2f}/{c.transmit_fraction['uncontrolled']:.2f}",
                     compact_number(c.avg_power_w["uncontrolled"]), f"{c.line_loss_db:.2f}", f"{c.gain_dbi:.2f}",
                     compact_number(c.eirp_w["uncontrolled"]),
                     *((f"{dist['controlled'].dist_m:.2f}", f"{dist['uncontrolled'].dist_m:.2f}") if narrow else
                       (f"{dist['controlled'].dist_m:.2f} ({dist['controlled'].dist_ft:.1f})",
                        f"{dist['uncontrolled'].dist_m:.2f} ({dist['uncontrolled'].dist_ft:.1f})"))])
    out.append(format_table(
        ["configuration", "MHz", "mode", "PEP W", "duty", "fill ctl/unc", "avg W unc", "loss dB",
         "gain dBi", "EIRP W unc", *(("ctl dist m", "unc dist m") if narrow else
                                     ("ctl dist m (ft)", "unc dist m (ft)"))], rows, align="lrlrrrrrrrrr",
        title="Configurations (average power after duty factor and averaging-window fill; peak gain)"))
    out.append("")
    yield from out          # the tables of places are printed (and dropped) one at a time
    out = []
    if res.places:
        rows = []
        for p in res.places:
            for x in p.exposures:
                unchecked = x.inside_near_field and x.near_field_ratio is None
                row = [p.label, p.environment, x.configuration, f"{x.dist_m:.2f}",
                       compact_number(x.power_density_w_m2), compact_number(x.e_field_v_m), compact_number(x.h_field_a_m),
                       f"{compact_number(x.exposure_ratio)} {marker(x.limit_verification)}",
                       f"{x.margin_db:+.1f}", x.method + (" [INSIDE NEAR FIELD]" if unchecked else "")]
                if narrow:
                    short = _SHORT_METHOD.get(x.method, x.method)
                    row = row[:1] + row[2:5] + row[7:9] + [short + (" (!)" if unchecked else "")]
                rows.append(row)
        heads = ["place", "environment", "configuration", "dist m", "S W/m2", "E V/m", "H A/m", "ratio",
                 "margin dB", "method"]
        out.append(format_table(heads[:1] + heads[2:5] + heads[7:] if narrow else heads, rows,
                                align="llrrrrl" if narrow else "lllrrrrrrl", keys=2 if narrow else 1,
                                title="Exposure at each place from each configuration"
                                      + (" (E, H and the environment: --wide; (!) inside the near field, "
                                         "far-field estimate not valid there)" if narrow else "")))
        out.append("")
        yield from out
        out = []
        rows = []
        for p in res.places:
            shares = ", ".join(f"{s.configuration} {compact_number(s.exposure_ratio)}" for s in p.contributions)
            rows.append([p.label, p.environment, compact_number(p.total_ratio), f"{p.total_margin_db:+.1f}",
                         p.verdict.upper(), shares])
        out.append(format_table(["place", "environment", "total ratio", "margin dB", "verdict", "summed"],
                                rows, align="llrrll", title="Simultaneous total at each place (sum of exposure ratios <= 1)"))
        out.append(f"  rule: {res.places[0].total_rule}")
        out.append("")
    rows = []
    for c in res.configurations:
        ln = c.line
        rated = [ps for ps in ln.part_stresses if ps.headroom is not None]
        weakest = min(rated, key=lambda ps: ps.headroom) if rated else None
        if weakest is None:
            weak_text, swr_text = "no ratings", "-"
        else:
            weak_text = f"{weakest.part} x{weakest.headroom:.2g} {marker(weakest.rating_verification)}"
            tol = weakest.largest_tolerable_swr
            swr_text = ("exceeded" if weakest.exceeded else "-") if tol is None else (
                "any" if tol == float("inf") else compact_number(tol))
        rows.append([c.id, f"{ln.swr_at_antenna:.2f}", f"{ln.swr_at_transmitter:.2f}",
                     compact_number(ln.line_voltage_v_peak), compact_number(ln.line_current_a_peak), f"{ln.total_loss_db:.2f}",
                     weak_text, swr_text, ", ".join(c.exceeded_parts) or "none"])
    out.append(format_table(["configuration", "SWR ant", "SWR tx", "V max (peak)", "I max A (peak)",
                             "loss dB", "least headroom", "SWR limit", "ratings exceeded"], rows, align="lrrrrrlrl",
                            title="Feedline and tuner stress at PEP (headroom = rating / stress; SWR limit: "
                                  "largest tolerable SWR of that part at this power)"))
    out.extend(f"  fails first, {c.id}: {c.line.first_failure}" for c in res.configurations if c.line.first_failure)
    out.append("")
    out.append(_verification_lines(res))
    from rfsafe.cli.answers import answer_sections

    out.extend(answer_sections(res))
    if res.exemption is not None:
        out.append("")
        ex = res.exemption
        thresholds = [s.threshold_verification for s in ex.per_source if s.threshold_w is not None]
        check = f" [thresholds: {MARKERS[weakest_state(thresholds)]}]" if thresholds else ""   # the weakest state
        out.append(f"47 CFR 1.1307(b)(3) exemption: {'EXEMPT' if ex.exempt else 'NOT EXEMPT'} ({ex.criterion})"
                   + check)
        out.append(f"  {ex.note}")
    out.append("")
    out.append(f"EXPOSURE VERDICT: {res.exposure_verdict}")
    out.extend(f"  - {line}" for line in res.exposure_reasons)
    out.append(f"EQUIPMENT VERDICT: {res.equipment_verdict}")
    out.extend(f"  - {line}" for line in res.equipment_reasons)
    yield from out


def _verification_lines(res) -> str:
    """Legend of the check markers (duty, ratio: its limit, least headroom: its rating) and a count."""
    from rfsafe.verification import LEGEND, count_line

    return ("markers after duty, ratio (its limit) and least headroom (its rating): "
            f"{LEGEND.removeprefix('check: ')}\n{count_line(res.data_verification)}")


def evaluate(file: Path = typer.Argument(..., help="Station file (.toml)."),
             standard: str = typer.Option(None, "--standard",
                                          help="Override the file's standard: fcc, icnirp2020, icnirp1998, ieee2019, sc6, eu1999; "
                                               "or all (every standard side by side)."),
             json_out: bool = typer.Option(False, "--json", help="Print one JSON document instead of tables."),
             csv_table: str = typer.Option(None, "--csv", metavar="TABLE",
                                           help="Print one table as CSV instead: places, exposures, configurations, "
                                                "keep-out or remedies."),
             remedies: bool = typer.Option(True, "--remedies/--no-remedies",
                                           help="Solve what would make each exceeding place comply, and each "
                                                "configuration's headroom (default on; re-runs the evaluation)."),
             wide: bool = typer.Option(False, "--wide", help="Do not fit tables and text to 100 columns.")) -> None:
    """Evaluate a station: exposure at every place, compliance distances, line stress.

    Also gives ground-level keep-out distances and remedies (largest power, schedule, antenna height,
    distance). --standard all evaluates under every standard, side by side, and marks the governing one
    (the largest ratio) at each place; its exit status is the worst of them.

    Two verdicts are given: exposure (people, against the limits) and equipment (line, connectors,
    tuner, against their ratings). Exit status: 0 exposure complies at every place and no rating is
    exceeded; 1 an exposure limit is exceeded at some place (whatever the equipment); 4 exposure
    complies but a rating is exceeded; 5 no place was evaluated; 2 bad input; 3 internal error.
    """
    from rfsafe.cli import answers, output
    from rfsafe.cli.output import print_json, warn
    from rfsafe.remedies import with_answers

    output.set_wide(wide)
    if json_out and csv_table:
        raise bad_value("--csv", csv_table, "cannot be combined with --json (give one of them)")
    if csv_table is not None and csv_table not in answers.CSV_TABLES:
        raise bad_value("--csv", csv_table, f"is not a table (accepted: {', '.join(answers.CSV_TABLES)})")
    if standard == "all":
        if csv_table is not None and csv_table not in ("places", "configurations"):
            raise bad_value("--csv", csv_table, "is not available with --standard all (accepted: places, "
                                                "configurations)")
        results = answers.all_standards(file, near_field_maps=json_out)   # tables and CSV draw no maps
        codes = [r.exit_code for r in results.values() if not isinstance(r, str)]
        if csv_table is not None:
            typer.echo(answers.all_standards_frame(results, csv_table).to_csv(index=False), nl=False)
        elif json_out:
            print_json({"standards": results, "governing": answers.governing(results)})
        else:
            typer.echo(answers.render_all_standards(results))
        raise typer.Exit(max(codes, key=lambda c: (c == 1, c)) if codes else 2)
    loaded = answers.load_station_file(file, standard)
    # Tables and CSV draw no maps: the near-field maps and the plan (plot data) are computed for JSON only.
    res = with_answers(loaded, remedies=remedies, near_field_maps=json_out)
    if csv_table is not None:
        write_csv(res, csv_table)
        raise typer.Exit(res.exit_code)
    if json_out:
        print_json(res)
    else:
        for block in render_blocks(res):
            typer.echo(output.fit_text(block))
        flags = sorted({f for c in res.configurations for f in c.flags} |
                       {f for p in res.places for f in p.flags})
        for f in flags:
            warn(f"caution: {f}")
        for c in res.cautions:
            warn(f"caution: {c}")
    raise typer.Exit(res.exit_code)


def register(app: typer.Typer) -> None:
    app.command("evaluate")(evaluate)
