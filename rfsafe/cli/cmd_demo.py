"""``rfsafe demo``: evaluate the invented demo station, wire station and event site; write their PDFs."""

from __future__ import annotations

from pathlib import Path

import typer

#: Demo inputs in reports_demo/ and the worksheet each one produces there.
DEMO_STATIONS = ("demo_station.toml", "demo_wire_station.toml")
DEMO_SITE = "event_field_day.toml"


def demo_dir() -> Path:
    """The reports_demo/ folder of the source checkout."""
    import rfsafe
    from rfsafe.errors import InputError

    folder = Path(rfsafe.__file__).resolve().parent.parent / "reports_demo"
    if not all((folder / name).is_file() for name in (*DEMO_STATIONS, DEMO_SITE)):
        raise InputError(f"demo: {str(folder)!r} does not hold the demo files (they are part of the source "
                         "checkout: install with `python3 -m pip install -e .` from it)")
    return folder


def demo() -> None:
    """Evaluate the invented demo station, wire-antenna station and event site in reports_demo/.

    Prints the demo station's tables and a summary line per demo, and (re)writes the worksheets
    reports_demo/demo_station.pdf, demo_wire_station.pdf and event_field_day.pdf. Exit status 0
    when everything was evaluated and written, whatever the verdicts (the wire-station and event
    demos exceed a limit on purpose, to show what that looks like).
    """
    from rfsafe.cli.cmd_evaluate import render_evaluation
    from rfsafe.cli.output import warn
    from rfsafe.remedies import with_answers
    from rfsafe.report.site_pdf import write_site_pdf
    from rfsafe.report.worksheet import write_worksheet
    from rfsafe.site import assess_site
    from rfsafe.site import load_site
    from rfsafe.station import load_station

    folder = demo_dir()
    summary = []
    for k, name in enumerate(DEMO_STATIONS):
        loaded = load_station(folder / name)
        res = with_answers(loaded)   # the same evaluation as rfsafe report (keep-out, remedies)
        if k == 0:
            from rfsafe.cli.output import fit_text

            typer.echo(fit_text(render_evaluation(res)))
            typer.echo("")
        pdf = write_worksheet(res, folder / name.replace(".toml", ".pdf"), force=True,
                              inputs=loaded.input_paths())
        summary.append(f"{name}: {res.verdict} -> {pdf}")
    loaded_site = load_site(folder / DEMO_SITE)
    site = assess_site(loaded_site)
    pdf = write_site_pdf(site, folder / DEMO_SITE.replace(".toml", ".pdf"), force=True,
                         inputs=loaded_site.input_paths())
    summary.append(f"{DEMO_SITE}: {site.verdict} ({len(site.violations)} violation(s)) -> {pdf}")
    typer.echo("Demo worksheets written:")
    for line in summary:
        from rfsafe.cli.output import fit_text

        typer.echo(fit_text(f"  {line}"))
    for c in res.cautions:
        warn(f"caution: {c}")
    raise typer.Exit(0)


def register(app: typer.Typer) -> None:
    app.command("demo")(demo)
