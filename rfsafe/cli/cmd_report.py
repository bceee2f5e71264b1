"""``rfsafe report``: evaluate a station file and write its PDF worksheet."""

from __future__ import annotations

from pathlib import Path

import typer


def default_output(file: Path) -> Path:
    """The station file's name with a ``.pdf`` suffix, beside it."""
    return file.with_suffix(".pdf")


def report(file: Path = typer.Argument(..., help="Station file (.toml)."),
           output: Path = typer.Option(None, "-o", "--output",
                                       help="PDF to write (default: the station file with .pdf beside it)."),
           force: bool = typer.Option(False, "--force", help="Overwrite an existing PDF."),
           standard: str = typer.Option(None, "--standard",
                                        help="Override the file's standard: fcc, icnirp2020, icnirp1998, "
                                             "ieee2019, sc6, eu1999.")) -> None:
    """Evaluate a station and write a reproducible PDF worksheet ready to sign.

    The worksheet holds the identity of the evaluation (with the SHA-256 of the station file),
    the method, every configuration, every place, line and tuner stress, plots, cautions and
    sign-off lines. Nothing is overwritten without --force; the PDF is written to a temporary
    file and renamed, so an interrupted run leaves no partial file.

    Exposure and equipment verdicts are shown separately. Exit status (the PDF is written in every
    case but bad input): 0 exposure complies at every place and no rating is exceeded; 1 an exposure
    limit is exceeded at some place; 4 exposure complies but a rating is exceeded; 5 no place was
    evaluated; 2 bad input; 3 internal error.
    """
    from rfsafe.fileio import OutputSet
    from rfsafe.remedies import with_answers
    from rfsafe.report.worksheet import build_worksheet_pdf
    from rfsafe.station import load_station

    loaded = load_station(file, standard=standard)
    out = output if output is not None else default_output(file)
    # every output path is checked before the evaluation: a bad -o fails fast
    with OutputSet([("-o", out)], inputs=loaded.input_paths(), force=force) as outputs:
        res = with_answers(loaded)
        outputs.write_bytes("-o", build_worksheet_pdf(res))
    typer.echo(f"{res.verdict}: worksheet written to {out}")
    raise typer.Exit(res.exit_code)


def register(app: typer.Typer) -> None:
    app.command("report")(report)
