"""``rfsafe site``: review an event site (several stations, areas, keep-out zones) and print tables or JSON."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from rfsafe.cli.output import compact_number

#: Grids with at least this many points get a progress bar (stderr, terminals only, not with --json).
PROGRESS_MIN_POINTS = 200_000


def _m(x) -> str:
    return "-" if not x else f"{x:.2f}"


def render_site(res) -> str:
    """Human-readable tables of a SiteResult: violations first, then stations, then areas."""
    from rfsafe.cli.output import format_table

    out = [res.title]
    out.append("  " + "\n  ".join([
        f"site: {res.site or '-'}", f"evaluator: {res.evaluator or '-'}",
        f"date: {res.evaluation_date} ({'from file' if res.evaluation_date_source == 'file' else 'today'})",
        f"standard: {res.standard_name}",
        f"ground reflection: {res.ground_reflection} (F = {res.ground_factor:g})",
        f"heights: {', '.join(f'{h:g}' for h in res.heights_m)} m (worst taken); grid {res.grid_spacing_m:g} m, "
        f"{res.grid_info['nx']} x {res.grid_info['ny']} points",
        f"input: {res.input_file} sha256 {res.input_sha256[:16]}..."]))
    out.append("")
    if res.violations:
        out.append(f"VIOLATIONS ({len(res.violations)}):")
        out.extend(f"  V{i + 1}. {v.text}" for i, v in enumerate(res.violations))
        if res.remedies:
            out.append("What would clear each violation (one station changed at a time, the others as they are):")
            out.extend(f"  - {r.text}" for r in res.remedies)
    else:
        out.append("No violations: no public or operators' area, open ground or ground outside the site is "
                   "above its limit.")
    out.append("")
    from rfsafe.report.site_text import exemption_lines, station_zone_lines

    out.append("Keep-out zones, station by station:")
    out.extend(f"  {'!' if state != 'none' else '-'} {line}" for _, state, line in station_zone_lines(res))
    out.append("")
    rows = []
    for t in res.transmitters:
        rows.append([t.transmitter, f"({t.x_m:g}, {t.y_m:g})", f"{t.height_m:g}", ", ".join(t.configurations),
                     _m(t.keep_out_m["uncontrolled"]), _m(t.keep_out_m["controlled"]),
                     _m(t.peak_gain_distance_m["uncontrolled"]),
                     _m(t.rope_off_radius_m) if t.rope_off_radius_m else "none needed",
                     f"{t.near_field_m:.2f}"])
    out.append(format_table(
        ["station", "x, y m", "height m", "configurations", "keep-out unc m", "keep-out ctl m",
         "peak-gain dist unc m", "rope-off radius m", "near field m"], rows, align="llrlrrrrr",
        title="Stations: keep-out zones on the ground (horizontal distance from the antenna; - = none)"))
    out.append("")
    rows = []
    for r in res.regions:
        rows.append([r.label, r.kind, r.checked_environment or "-", compact_number(r.worst_ratio["uncontrolled"]),
                     compact_number(r.worst_ratio["controlled"]), str(r.points_over) if r.checked_environment else "-",
                     r.dominant_transmitter or "-", str(r.near_field_points), r.verdict])
    out.append(format_table(
        ["area", "kind", "limit checked", "worst unc", "worst ctl", "points over", "mostly from",
         "near-field pts", "verdict"], rows, align="lllrrrlrl",
        title="Areas: worst total exposure ratio (1 = limit)"))
    from rfsafe.verification import count_line

    out.append(count_line(res.data_verification))
    ex_lines = exemption_lines(getattr(res, "exemption", None))
    if ex_lines:
        out.append("")
        out.append(ex_lines[0])
        out.extend(f"  - {line}" for line in ex_lines[1:])
    out.append("")
    out.append(f"EXPOSURE VERDICT: {res.exposure_verdict}")
    out.extend(f"  - {line}" for line in res.exposure_reasons)
    out.append(f"EQUIPMENT VERDICT: {res.equipment_verdict}")
    out.extend(f"  - {line}" for line in res.equipment_reasons)
    return "\n".join(out)


GRID_CSV_HEADER = ("x_m,y_m,ratio_controlled,ratio_uncontrolled,worst_height_controlled_m,"
                   "worst_height_uncontrolled_m,near_field,region\n")


def write_grid_csv(res, fh, *, points_per_chunk: int = 16384) -> None:
    """Stream the evaluated grid as CSV to the text file ``fh``: one row per point, row-major (y, then x).

    The grid is formatted ``points_per_chunk`` points at a time, so memory beyond the grid itself stays
    the same whatever the grid's size or width.
    """
    import numpy as np

    g = res.grid
    quoted = ['"' + str(s).replace('"', '""') + '"' for s in g.region_labels]
    fh.write(GRID_CSV_HEADER)
    nx, n = g.x_m.size, g.x_m.size * g.y_m.size
    row_format = "%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%s,%s\n".__mod__
    flat = [a.reshape(-1) for a in (g.ratio[0], g.ratio[1], g.worst_height_m[0], g.worst_height_m[1],
                                    g.near_field, g.region)]
    for start in range(0, n, points_per_chunk):
        k = np.arange(start, min(start + points_per_chunk, n))
        r0, r1, h0, h1, near, region = (a[start:k[-1] + 1] for a in flat)
        cols = (g.x_m[k % nx].tolist(), g.y_m[k // nx].tolist(), r0.tolist(), r1.tolist(), h0.tolist(),
                h1.tolist(), ["true" if v else "false" for v in near.tolist()], [quoted[i] for i in region.tolist()])
        fh.write("".join(map(row_format, zip(*cols))))


def grid_csv_bytes(res) -> bytes:
    """The evaluated grid as CSV bytes (see :func:`write_grid_csv`)."""
    import io

    text = io.StringIO()
    write_grid_csv(res, text)
    return text.getvalue().encode("utf-8")


class _Progress:
    """A one-line progress bar on stderr."""

    def __init__(self) -> None:
        self.last = -1

    def __call__(self, done: int, total: int) -> None:
        if total < PROGRESS_MIN_POINTS:
            return
        pct = int(100 * done / total)
        if pct == self.last:
            return
        self.last = pct
        bar = "#" * (pct // 4) + "-" * (25 - pct // 4)
        sys.stderr.write(f"\rgrid [{bar}] {pct:3d}% of {total} points")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()


def site(file: Path = typer.Argument(..., help="Site file (.toml)."),
         json_out: bool = typer.Option(False, "--json", help="Print one JSON document instead of tables."),
         csv_out: Path = typer.Option(None, "--csv", metavar="GRID.csv",
                                      help="Also write the evaluated grid as CSV (one row per point)."),
         output: Path = typer.Option(None, "-o", "--output", metavar="SITE.pdf",
                                     help="Also write the site review as PDF (map, tables, cautions)."),
         force: bool = typer.Option(False, "--force", help="Overwrite existing output files."),
         wide: bool = typer.Option(False, "--wide", help="Do not fit tables and text to 100 columns.")) -> None:
    """Review an event site: keep-out zones of every station, areas, violations, rope-off radii.

    Two verdicts are given: exposure (people in each area against their limits) and equipment (lines,
    connectors, tuners against their ratings). Exit status: 0 no violation and no rating exceeded;
    1 a violation (whatever the equipment); 4 no violation but a rating is exceeded; 2 bad input;
    3 internal error.
    """
    from rfsafe.cli.output import print_json, set_wide, warn
    from rfsafe.fileio import OutputSet
    from rfsafe.site import assess_site, load_site

    set_wide(wide)

    loaded = load_site(file)
    wanted = [(field, path) for field, path in (("-o", output), ("--csv", csv_out)) if path is not None]
    # all output paths are checked before the evaluation; the PDF and CSV are committed as one set
    with OutputSet(wanted, inputs=loaded.input_paths(), force=force) as outputs:
        progress = _Progress() if (not json_out and sys.stderr.isatty()) else None
        res = assess_site(loaded, progress=progress)
        import dataclasses

        from rfsafe.remedies import site_remedies

        res = dataclasses.replace(res, remedies=site_remedies(res))
        if csv_out is not None:
            with outputs.open("--csv", "w", encoding="utf-8", newline="") as fh:
                write_grid_csv(res, fh)
        if output is not None:
            from rfsafe.report.site_pdf import build_site_pdf

            outputs.write_bytes("-o", build_site_pdf(res))
    if json_out:
        print_json(res)
    else:
        from rfsafe.cli.output import fit_text

        typer.echo(fit_text(render_site(res)))
        for f in res.flags:
            warn(f"caution: {f}")
        for c in res.cautions:
            warn(f"caution: {c}")
        if output is not None:
            warn(f"wrote {output}")
        if csv_out is not None:
            warn(f"wrote {csv_out}")
    raise typer.Exit(res.exit_code)


def register(app: typer.Typer) -> None:
    app.command("site")(site)
