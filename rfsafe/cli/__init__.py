"""Command-line interface: a thin shell over the library (parse, call, format).

Every command lives in its own module ``rfsafe.cli.cmd_<name>`` exposing
``register(app)``. Command modules import numpy, pandas, reportlab and
matplotlib only inside the command functions, so that ``rfsafe --help`` stays
fast. Input errors become one ``Error: ...`` line on stderr and exit code 2,
here and nowhere else. Any other exception is a bug in rfsafe: it becomes one
``Internal error: ...`` line and exit code :data:`EXIT_INTERNAL` (never 0, which
reads as "complies", nor 1, which reads as "exceeds").
"""

from __future__ import annotations

import importlib
import sys

import typer
from typer.core import TyperGroup

try:  # typer >= 0.20 vendors click as typer._click
    from typer._click import exceptions as _cx
except ImportError:  # pragma: no cover - older typer depends on click itself
    from click import exceptions as _cx

from rfsafe.errors import InputError

__all__ = ["app", "main", "EXIT_INTERNAL"]

#: Exit status of an unexpected internal error (a bug), distinct from 0, 1 and 2.
EXIT_INTERNAL = 3

#: Command modules, in the order their commands appear in ``--help``.
_COMMAND_MODULES = (
    "rfsafe.cli.cmd_evaluate",
    "rfsafe.cli.cmd_station",
    "rfsafe.cli.cmd_limits",
    "rfsafe.cli.cmd_line",
    "rfsafe.cli.cmd_wire",
    "rfsafe.cli.cmd_site",
    "rfsafe.cli.cmd_report",
    "rfsafe.cli.cmd_demo",
)


class _Group(TyperGroup):
    """Typer group that turns input errors into one plain line and exit 2."""

    def list_commands(self, ctx):  # keep registration order, not alphabetical
        return list(self.commands)

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        try:
            rv = super().main(args=args, prog_name=prog_name or "rfsafe",
                              complete_var=complete_var, standalone_mode=False, **extra)
        except InputError as err:
            typer.echo(f"Error: {err}", err=True)
            sys.exit(2)
        except _cx.NoArgsIsHelpError as err:
            typer.echo(err.ctx.get_help() if err.ctx else str(err))
            sys.exit(0)
        except _cx.ClickException as err:
            typer.echo(f"Error: {err.format_message()}", err=True)
            sys.exit(err.exit_code)
        except typer.Abort:
            typer.echo("Error: aborted", err=True)
            sys.exit(130)
        except (KeyboardInterrupt, SystemExit):
            raise
        except Exception as err:  # noqa: BLE001 - a bug must never read as a verdict
            typer.echo(f"Internal error: {type(err).__name__}: {err} (this is a bug in rfsafe; no verdict was "
                       "reached; please report it with the input file)", err=True)
            sys.exit(EXIT_INTERNAL)
        sys.exit(rv if isinstance(rv, int) else 0)


app = typer.Typer(
    cls=_Group,
    name="rfsafe",
    help="RF exposure, feedline stress and event-site evaluation for radio transmitters.\n\n"
         "Results are estimates under stated assumptions; local regulation and the "
         "regulator's guidance govern.",
    no_args_is_help=True,
    add_completion=False,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


@app.callback(invoke_without_command=True)
def _root(ctx: typer.Context,
          version: bool = typer.Option(False, "--version", help="Print the rfsafe version and exit.")) -> None:
    if version:
        from rfsafe import __version__
        typer.echo(f"rfsafe {__version__}")
        raise typer.Exit(0)
    if ctx.invoked_subcommand is None:
        typer.echo(ctx.get_help())
        raise typer.Exit(0)


for _name in _COMMAND_MODULES:
    importlib.import_module(_name).register(app)


def main() -> None:
    """Console-script entry point."""
    app()
