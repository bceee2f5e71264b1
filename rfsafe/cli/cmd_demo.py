"""``rfsafe demo``: evaluate the bundled demo station (and site) and write their worksheets."""

from __future__ import annotations

from pathlib import Path

import typer


def demo_dir() -> Path:
    """The reports_demo/ folder of the source checkout."""
    import rfsafe
    from rfsafe.errors import InputError

    folder = Path(rfsafe.__file__).resolve().parent.parent / "reports_demo"
    if not (folder / "demo_station.toml").is_file():
        raise InputError(f"demo: {str(folder)!r} has no demo_station.toml (the demo files are part of the "
                         "source checkout: install with `python3 -m pip install -e .` from it)")
    return folder


def demo() -> None:
    """Evaluate the invented demo station in reports_demo/ and print its tables."""
    from rfsafe.assess import assess
    from rfsafe.cli.cmd_evaluate import render_evaluation
    from rfsafe.cli.output import warn
    from rfsafe.station import load_station

    folder = demo_dir()
    station_file = folder / "demo_station.toml"
    res = assess(load_station(station_file))
    typer.echo(render_evaluation(res))
    for c in res.cautions:
        warn(f"caution: {c}")
    raise typer.Exit(0)


def register(app: typer.Typer) -> None:
    app.command("demo")(demo)
