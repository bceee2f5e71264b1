"""Commands on station files: ``init`` (starter file), ``schema`` (JSON Schema), ``check`` (validate)."""

from __future__ import annotations

from pathlib import Path

import typer



def init(path: Path = typer.Argument(..., help="Where to write the starter station file (.toml)."),
         force: bool = typer.Option(False, "--force", help="Overwrite an existing file.")) -> None:
    """Write a commented starter station file that evaluates as it is."""
    from rfsafe.fileio import atomic_write_bytes
    from rfsafe.station.template import STARTER_TOML

    atomic_write_bytes(path, STARTER_TOML.encode("utf-8"), force=force, field="PATH")
    typer.echo(f"wrote {path}: edit it, then run: rfsafe evaluate {path}")
    raise typer.Exit(0)


def schema() -> None:
    """Print the JSON Schema of station files (for editor validation)."""
    import json

    from rfsafe.station.jsonschema import station_json_schema

    typer.echo(json.dumps(station_json_schema(), indent=2))
    raise typer.Exit(0)


def check(file: Path = typer.Argument(..., help="Station file (.toml) to validate."),
          standard: str = typer.Option(None, "--standard", help="Override the file's standard.")) -> None:
    """Validate a station file without evaluating it."""
    from rfsafe.station import load_station

    loaded = load_station(file, standard=standard)
    st = loaded.model
    typer.echo(f"OK: {file} is a valid station file ({len(st.configurations)} configurations, "
               f"{len(st.places)} places, standard {st.standard})")
    raise typer.Exit(0)


def register(app: typer.Typer) -> None:
    app.command("init")(init)
    app.command("schema")(schema)
    app.command("check")(check)
