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
import re
import sys
import warnings

import typer
from typer.core import TyperGroup

try:  # typer >= 0.20 vendors click as typer._click
    from typer._click import exceptions as _cx
except ImportError:  # pragma: no cover - older typer depends on click itself
    from click import exceptions as _cx

from rfsafe.errors import InputError

__all__ = ["app", "main", "make_app", "EXIT_INTERNAL"]

#: Exit status of an unexpected internal error (a bug), distinct from 0, 1 and 2.
EXIT_INTERNAL = 3
#: Distinct warnings raised during the last command, at most 20 (never shown to the user; see ``_Group.main``).
RECORDED_WARNINGS: list[str] = []

#: Command modules, in the order their commands appear in ``--help``.
_COMMAND_MODULES = (
    "rfsafe.cli.cmd_evaluate",
    "rfsafe.cli.cmd_ask",
    "rfsafe.cli.cmd_station",
    "rfsafe.cli.cmd_limits",
    "rfsafe.cli.cmd_line",
    "rfsafe.cli.cmd_wire",
    "rfsafe.cli.cmd_site",
    "rfsafe.cli.cmd_report",
    "rfsafe.cli.cmd_demo",
)
#: The module of each command: ``rfsafe <command> ...`` loads that module only (see :func:`main`).
_MODULE_OF_COMMAND = {
    "evaluate": "rfsafe.cli.cmd_evaluate", "ask": "rfsafe.cli.cmd_ask", "init": "rfsafe.cli.cmd_station",
    "schema": "rfsafe.cli.cmd_station", "check": "rfsafe.cli.cmd_station", "limits": "rfsafe.cli.cmd_limits",
    "line": "rfsafe.cli.cmd_line", "wire": "rfsafe.cli.cmd_wire", "site": "rfsafe.cli.cmd_site",
    "report": "rfsafe.cli.cmd_report", "demo": "rfsafe.cli.cmd_demo",
}


_NOT_VALID = re.compile(r"^'(?P<value>.*)' is not a valid (?P<type>float|integer|boolean)\.?$", re.S)
_TYPE_ACCEPTED = {"float": "is not a number (accepted: a number such as 100, 0.5 or 1e3)",
                  "integer": "is not a whole number (accepted: e.g. 3)",
                  "boolean": "is not true or false"}


def _param_name(param) -> str:
    """The option as the user types it (the long form), or the argument's metavar."""
    opts = getattr(param, "opts", None) or []
    if opts and getattr(param, "param_type_name", "") == "option":
        return max(opts, key=len)
    return (getattr(param, "metavar", None) or getattr(param, "name", "ARGUMENT") or "ARGUMENT").upper()


def _given_value(name: str, args) -> str | None:
    """The text the user gave for option ``name`` on the command line, if it can be found."""
    args = list(args or ())
    for i, a in enumerate(args):
        if a == name and i + 1 < len(args):
            return args[i + 1]
        if a.startswith(name + "="):
            return a[len(name) + 1:]
    return None


def usage_message(err, args=None) -> str:
    """A command-line parser error as ``<option>: <value> <what is accepted>`` (no ``Error:`` prefix)."""
    from rfsafe.errors import format_value

    if isinstance(err, _cx.MissingParameter) and err.param is not None:
        return f"{_param_name(err.param)}: is required but missing"
    if isinstance(err, _cx.BadParameter) and err.param is not None:
        name = _param_name(err.param)
        msg = err.message
        m = _NOT_VALID.match(msg)
        if m:
            return f"{name}: {format_value(m['value'])} {_TYPE_ACCEPTED[m['type']]}"
        given = _given_value(name, args)
        if "valid number" in msg or "valid float" in msg:
            accepted = _TYPE_ACCEPTED["float"]
        elif "valid integer" in msg:
            accepted = _TYPE_ACCEPTED["integer"]
        else:
            accepted = f"is not accepted ({msg[0].lower() + msg[1:] if msg else 'see --help'})"
        return f"{name}: {format_value(given) + ' ' if given is not None else ''}{accepted}"
    if isinstance(err, _cx.NoSuchOption):
        known = sorted(err.possibilities or ())
        hint = f" (did you mean {', '.join(known)}?)" if known else " (see --help for the options)"
        return f"{err.option_name}: is not an option of this command{hint}"
    if isinstance(err, _cx.BadOptionUsage):
        what = "takes no value (it is a switch)" if "does not take a value" in err.message else "needs a value"
        return f"{err.option_name}: {what} (see --help)"
    msg = err.format_message()
    m = re.match(r"^Got unexpected extra arguments? ?(\(s\))? \((?P<args>.*)\)$", msg)
    if m:
        return f"ARGUMENTS: {format_value(m['args'])} are not expected (see --help for the usage)"
    m = re.match(r"^No such command '(?P<cmd>.*)'\.?$", msg)
    if m:
        return f"COMMAND: {format_value(m['cmd'])} is not an rfsafe command (see rfsafe --help)"
    return f"ARGUMENTS: {msg}"


class _Group(TyperGroup):
    """Typer group that turns input errors into one plain line and exit 2."""

    def list_commands(self, ctx):  # keep registration order, not alphabetical
        return list(self.commands)

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        # Warnings (numpy's RuntimeWarning on an overflow, say) never reach the user: every number
        # shown is checked or explained where it is made. They are kept in RECORDED_WARNINGS for
        # the fuzz tests, which treat any of them as a defect to fix at its root.
        RECORDED_WARNINGS.clear()
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                try:
                    rv = super().main(args=args, prog_name=prog_name or "rfsafe",
                                      complete_var=complete_var, standalone_mode=False, **extra)
                finally:
                    for w in caught:
                        text = f"{w.category.__name__}: {w.message} ({w.filename}:{w.lineno})"
                        if text not in RECORDED_WARNINGS and len(RECORDED_WARNINGS) < 20:
                            RECORDED_WARNINGS.append(text)
        except InputError as err:
            typer.echo(f"Error: {err}", err=True)
            sys.exit(2)
        except _cx.NoArgsIsHelpError as err:
            typer.echo(err.ctx.get_help() if err.ctx else str(err))
            sys.exit(0)
        except _cx.ClickException as err:
            typer.echo(f"Error: {usage_message(err, args if args is not None else sys.argv[1:])}", err=True)
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


def _root(ctx: typer.Context,
          version: bool = typer.Option(False, "--version", help="Print the rfsafe version and exit.")) -> None:
    from rfsafe.cli.output import set_wide

    set_wide(False)   # every run starts fitted to 100 columns; a command's --wide changes it for that run
    if version:
        from rfsafe import __version__
        typer.echo(f"rfsafe {__version__}")
        raise typer.Exit(0)
    if ctx.invoked_subcommand is None:
        typer.echo(ctx.get_help())
        raise typer.Exit(0)


def make_app(modules: tuple[str, ...] = _COMMAND_MODULES) -> typer.Typer:
    """The typer app with the commands of ``modules`` (default: every command, in ``--help`` order)."""
    new = typer.Typer(
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
    new.callback(invoke_without_command=True)(_root)
    for name in modules:
        importlib.import_module(name).register(new)
    return new


def __getattr__(name: str):
    """``rfsafe.cli.app``: the app with every command, made on first use (``main`` needs one command only)."""
    if name == "app":
        globals()["app"] = full = make_app()
        return full
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _terminate(signum, frame):  # noqa: ARG001 - signal handler signature
    raise SystemExit(128 + signum)


def main() -> None:
    """Console-script entry point.

    SIGTERM becomes :class:`SystemExit`, so that a terminated run unwinds and removes its temporary
    output files like an interrupted one (SIGKILL cannot be caught: the next run removes them).
    ``rfsafe <command> ...`` loads and converts that command only (the others cost start-up time and
    are not used); anything else (``--help``, a misspelt command) gets the app with every command.
    """
    import os
    import signal

    signal.signal(signal.SIGTERM, _terminate)
    # rfsafe's file models use no pydantic plugins: skip the search of every installed package's entry
    # points for them (about 0.006 s of each run); a value the user set is kept.
    os.environ.setdefault("PYDANTIC_DISABLE_PLUGINS", "__all__")
    module = _MODULE_OF_COMMAND.get(sys.argv[1]) if len(sys.argv) > 1 else None
    make_app((module,) if module else _COMMAND_MODULES)()
