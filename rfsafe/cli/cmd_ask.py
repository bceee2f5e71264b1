"""``rfsafe ask``: a question without a station file, for one setting or swept over bands and powers."""

from __future__ import annotations

import math

import typer

_KINDS = "isotropic, short-dipole, half-wave-dipole, quarter-wave-vertical, beam, other"


def _numbers(option: str, text: str | None, *, positive: bool = True) -> list[float]:
    """A comma-separated list of finite numbers from an option."""
    from rfsafe.errors import bad_value

    if text is None:
        return []
    out = []
    for part in text.split(","):
        try:
            x = float(part.strip())
        except ValueError:
            raise bad_value(option, part.strip(), "must be a number (or a comma-separated list of numbers)") from None
        if not math.isfinite(x) or (positive and x <= 0):
            raise bad_value(option, part.strip(), "must be a finite number > 0")
        out.append(x)
    return out


def _one(option: str, text: str | None, *, positive: bool = True) -> float | None:
    vals = _numbers(option, text, positive=positive)
    if len(vals) > 1:
        from rfsafe.errors import bad_value

        raise bad_value(option, text, "takes one number")
    return vals[0] if vals else None


def answers_frame(answers, *, with_standard: bool):
    """The answers as a pandas DataFrame in SI/display units (one row per answer; CSV columns)."""
    import pandas as pd

    return pd.DataFrame(answers_rows(answers, with_standard=with_standard))


def answers_rows(answers, *, with_standard: bool) -> list[dict]:
    """The answers as rows (column name -> value, the CSV columns; the table needs no pandas)."""
    rows = []
    groups: dict = {}
    for a in answers:
        groups.setdefault((a.band, a.freq_mhz if a.band is None else None, a.pep_w), []).append(a)
    governing = {id(max(g, key=lambda a: a.compliance_dist_m["uncontrolled"])) for g in groups.values()}
    for a in answers:
        row = {}
        if with_standard:
            row["standard"] = a.standard
            row["governs"] = id(a) in governing
        row.update({"band": a.band or "", "freq_mhz": a.freq_mhz, "pep_w": a.pep_w, "mode": a.mode,
                    "gain_dbi": a.gain_dbi, "line_loss_db": a.line_loss_db,
                    "eirp_uncontrolled_w": a.eirp_w["uncontrolled"],
                    "dist_controlled_m": a.compliance_dist_m["controlled"],
                    "dist_uncontrolled_m": a.compliance_dist_m["uncontrolled"]})
        if a.ground_keep_out_m is not None:
            row["ground_keep_out_controlled_m"] = a.ground_keep_out_m["controlled"]
            row["ground_keep_out_uncontrolled_m"] = a.ground_keep_out_m["uncontrolled"]
        if a.ratio_at_distance is not None:
            row["ratio_controlled"] = a.ratio_at_distance["controlled"]
            row["ratio_uncontrolled"] = a.ratio_at_distance["uncontrolled"]
            for env in ("controlled", "uncontrolled"):
                v = a.largest_pep_w[env]
                row[f"largest_pep_{env}_w"] = v if v is not None and math.isfinite(v) else None
            row["exemption"] = a.exemption
        rows.append(row)
    return rows


_HEADERS = {"standard": "standard", "governs": "gov", "band": "band", "freq_mhz": "MHz", "pep_w": "PEP W",
            "mode": "mode", "gain_dbi": "gain dBi", "line_loss_db": "loss dB", "eirp_uncontrolled_w": "EIRP W unc",
            "dist_controlled_m": "ctl dist m", "dist_uncontrolled_m": "unc dist m",
            "ground_keep_out_controlled_m": "ground ctl m", "ground_keep_out_uncontrolled_m": "ground unc m",
            "ratio_controlled": "ratio ctl", "ratio_uncontrolled": "ratio unc",
            "largest_pep_controlled_w": "max PEP ctl W", "largest_pep_uncontrolled_w": "max PEP unc W",
            "exemption": "1.1307(b)(3)"}


def _missing(v) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def render_answers(rows: list[dict]) -> str:
    """The answers table for the terminal (numbers rounded for reading; CSV keeps full precision)."""
    from rfsafe.cli.output import compact_number, format_table

    def cell(col, v):
        if col == "governs":
            return "*" if v else ""
        if col == "exemption":
            return "n/a" if str(v).startswith("not applicable") else str(v).split(" (")[0]
        if isinstance(v, str):
            return v
        if _missing(v):
            return "-"
        if col.endswith("_m"):
            return f"{v:.2f}"
        if col in ("gain_dbi", "line_loss_db"):
            return f"{v:.2f}"
        return compact_number(v)

    cols = list(dict.fromkeys(k for r in rows for k in r))   # every column, in order of first appearance
    if "band" in cols and not any(r.get("band") for r in rows):
        cols.remove("band")
    same = []
    if len(rows) > 1:   # a column with one value throughout is said once, above the table
        for c in ("standard", "mode", "gain_dbi", "line_loss_db", "pep_w", "freq_mhz", "exemption"):
            if c in cols and len({None if _missing(r.get(c)) else r[c] for r in rows}) == 1:
                same.append(f"{_HEADERS[c]} {cell(c, rows[0].get(c))}")
                cols.remove(c)
    table_rows = [[cell(c, r.get(c)) for c in cols] for r in rows]
    align = "".join("l" if c in ("standard", "band", "mode", "exemption", "governs") else "r" for c in cols)
    keys = 1 + sum(1 for c in cols[1:3] if c in ("band", "freq_mhz", "standard", "governs"))
    table = format_table([_HEADERS[c] for c in cols], table_rows, align=align, keys=min(keys, len(cols)))
    return (("same in every row: " + "; ".join(same) + "\n") if same else "") + table


def render_single(a) -> str:
    """One answer, environments side by side."""
    from rfsafe.cli.output import compact_number, format_table

    def both(f):
        return [f("controlled"), f("uncontrolled")]

    head = (f"{a.freq_mhz:g} MHz" + (f" ({a.band})" if a.band else "") + f", {compact_number(a.pep_w)} W PEP "
            f"into the line, line loss {a.line_loss_db:.2f} dB\n47 CFR 1.1307(b)(3) exemption: {a.exemption}\n")
    rows = [["average power at the antenna [W]", *both(lambda e: compact_number(a.avg_power_at_antenna_w[e]))],
            ["EIRP (time-averaged) [W]", *both(lambda e: compact_number(a.eirp_w[e]))],
            ["compliance distance (3-D) [m]", *both(lambda e: f"{a.compliance_dist_m[e]:.2f} "
                                                           f"({a.compliance_dist_m[e] / 0.3048:.1f} ft)")]]
    if a.ground_keep_out_m is not None:
        rows.append(["keep-out from the foot, standing [m]", *both(lambda e: f"{a.ground_keep_out_m[e]:.2f}")])
    if a.ratio_at_distance is not None:
        rows.append([f"exposure ratio at {a.distance_m:g} m", *both(lambda e: compact_number(a.ratio_at_distance[e]))])
        rows.append([f"largest PEP at {a.distance_m:g} m [W]",
                     *both(lambda e: "-" if a.largest_pep_w[e] is None else compact_number(a.largest_pep_w[e]))])
    return head + format_table(["", "controlled", "uncontrolled"], rows, align="lrr")


def ask(power_w: str = typer.Option(..., "--power-w", metavar="W[,W...]",
                                    help="Peak envelope power into the feedline [W]; a comma list sweeps."),
        freq_mhz: str = typer.Option(None, "--freq-mhz", metavar="MHZ[,MHZ...]",
                                     help="Frequency [MHz]; a comma list sweeps."),
        bands: str = typer.Option(None, "--bands", metavar="BAND[,BAND...]",
                                  help="Amateur bands instead of frequencies (160m ... 23cm, or hf, vhf, uhf, "
                                       "all); each band is answered at its worse edge."),
        mode: str = typer.Option("carrier", "--mode", metavar="MODE",
                                 help="Mode whose duty factor applies (default carrier: duty 1, conservative)."),
        antenna: str = typer.Option(None, "--antenna", metavar="KIND", help=f"Antenna kind: {_KINDS}."),
        gain_dbi: str = typer.Option(None, "--gain-dbi", metavar="DBI", help="Peak antenna gain [dBi] (or --gain-dbd)."),
        gain_dbd: str = typer.Option(None, "--gain-dbd", metavar="DBD", help="Peak antenna gain over a half-wave dipole [dBd]."),
        size_m: str = typer.Option(None, "--size-m", metavar="M",
                                   help="Largest dimension of the antenna [m]; the person's distance is then taken "
                                        "to its nearest part (default: rfsafe's conservative assumption, see "
                                        "evaluate)."),
        cable: str = typer.Option(None, "--cable", metavar="CLASS", help="Cable class (see `rfsafe line --help`); default: no "
                                                        "line loss (conservative)."),
        length_m: str = typer.Option(None, "--length-m", metavar="M", help="Cable length [m] (with --cable)."),
        swr: str = typer.Option(None, "--swr", metavar="SWR", help="SWR at the antenna (mismatch loss on the cable)."),
        height_m: str = typer.Option(None, "--height-m", metavar="M",
                                     help="Antenna height above ground [m]; the person is then a standing body "
                                          "(0.5-2 m, worst taken) and ground-level keep-out is given."),
        distance_m: str = typer.Option(None, "--distance-m", metavar="M",
                                       help="Horizontal distance from the antenna's foot to the person [m] "
                                            "(without --height-m: level with the antenna)."),
        standard: str = typer.Option("fcc", "--standard", metavar="ID",
                                     help="fcc, icnirp2020, icnirp1998, ieee2019, sc6, eu1999, or all (side by side)."),
        ground: str = typer.Option("full", "--ground", metavar="KIND", help="Ground reflection: none, typical, full (default)."),
        json_out: bool = typer.Option(False, "--json", help="Print one JSON document instead of the table."),
        csv_out: bool = typer.Option(False, "--csv", help="Print the table as CSV (full precision)."),
        wide: bool = typer.Option(False, "--wide", help="Do not fit the table to 100 columns.")) -> None:
    """Ask without a station file: compliance distances, ratio and largest power at a distance, exemption.

    The question becomes a one-transmitter station evaluated exactly as `rfsafe evaluate` evaluates a
    station file. Lists of frequencies, bands or powers (and --standard all) give one row each.
    Exit status: 0 within the limits at the distance (or no distance given), 1 above a limit, 2 bad input.
    """
    from rfsafe.cli import output
    from rfsafe.errors import InputError
    from rfsafe.limits import STANDARD_IDS
    from rfsafe.quick import BAND_SOURCE, QuickQuestion, sweep

    powers = _numbers("--power-w", power_w)
    freqs = _numbers("--freq-mhz", freq_mhz)
    band_list = [b for b in (bands or "").split(",") if b.strip()]
    if not freqs and not band_list:
        raise InputError("--freq-mhz: is required (or give --bands)")
    if json_out and csv_out:
        raise InputError("--csv: give either --json or --csv, not both")
    stds = list(STANDARD_IDS) if standard == "all" else [standard]
    base = QuickQuestion(pep_w=powers[0], freq_mhz=(freqs or [1.0])[0], mode=mode, antenna=antenna,
                         gain_dbi=_one("--gain-dbi", gain_dbi, positive=False),
                         gain_dbd=_one("--gain-dbd", gain_dbd, positive=False), cable=cable,
                         length_m=_one("--length-m", length_m, positive=False), swr=_one("--swr", swr),
                         height_m=_one("--height-m", height_m, positive=False),
                         distance_m=_one("--distance-m", distance_m, positive=False), standard=stds[0],
                         size_m=_one("--size-m", size_m),
                         ground_reflection=ground)
    for opt, v in (("--length-m", base.length_m), ("--height-m", base.height_m), ("--distance-m", base.distance_m)):
        if v is not None and v < 0:
            from rfsafe.errors import bad_value

            raise bad_value(opt, v, "must be >= 0")
    answers = sweep(base, freqs_mhz=freqs, bands=band_list, powers_w=powers, standards=stds)
    exceeded = any(a.ratio_at_distance and max(a.ratio_at_distance.values()) > 1.0 for a in answers)
    if json_out:
        from rfsafe.results import CAUTIONS

        output.print_json({"answers": answers, "band_source": BAND_SOURCE if band_list else None,
                           "cautions": CAUTIONS})
        raise typer.Exit(1 if exceeded else 0)
    if csv_out:
        typer.echo(answers_frame(answers, with_standard=len(stds) > 1).to_csv(index=False), nl=False)
        raise typer.Exit(1 if exceeded else 0)
    output.set_wide(wide)
    a0 = answers[0]
    from rfsafe.verification import LEGEND, marker

    lines = ["Quick question (evaluated as a one-transmitter station file)",
             f"  antenna: {a0.gain_source}, {a0.gain_dbi:.2f} dBi peak gain; mode {a0.mode} "
             f"(duty factor {a0.duty_factor:g} {marker(a0.duty_factor_verification)}); ground reflection {ground}",
             "  limits: " + ", ".join(f"{env} {marker(v)}" for env, v in a0.limit_verification.items())
             + "  (" + LEGEND + ")",
             "  " + ("person: " + (f"{a0.distance_m:g} m from the antenna's foot, standing (0.5-2 m)"
                                   if a0.height_m is not None else f"{a0.distance_m:g} m away, level with the antenna")
                     if a0.distance_m is not None else "no --distance-m: compliance distances only"),
             "  " + ("standards: " + ", ".join(stds) + " (gov = largest uncontrolled distance)" if len(stds) > 1
                     else f"standard: {a0.standard_name}"),
             ""]
    typer.echo(output.fit_text("\n".join(lines)))
    typer.echo(render_single(a0) if len(answers) == 1 else
               render_answers(answers_rows(answers, with_standard=len(stds) > 1)))
    typer.echo("")
    typer.echo(output.fit_text("Compliance distances are 3-D, from the antenna (peak gain, far-field estimate); "
                               "keep-out ('ground'): horizontal, from the antenna's foot, for a standing person "
                               "(0.5-2 m); largest PEP ('max PEP'): within the limit at the distance, everything "
                               "else unchanged."))
    if band_list:
        output.warn(f"note: {BAND_SOURCE}")
    from rfsafe.results import CAUTIONS

    for f in sorted({f for a in answers for f in a.flags}):
        output.warn(f"caution: {f}")
    for c in CAUTIONS:
        output.warn(f"caution: {c}")
    raise typer.Exit(1 if exceeded else 0)


def register(app: typer.Typer) -> None:
    app.command("ask")(ask)
