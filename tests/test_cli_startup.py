"""Start-up: `rfsafe --help` stays fast (no heavy imports) and every command has help."""

import json
import subprocess
import sys

from typer.testing import CliRunner

from rfsafe.cli import app

HEAVY = ("numpy", "pandas", "reportlab", "matplotlib", "scipy")


def test_help_imports_no_heavy_modules():
    code = ("import sys; from rfsafe.cli import app\n"
            "try:\n    app(['--help'])\nexcept SystemExit:\n    pass\n"
            "import json; print(json.dumps(sorted(m for m in sys.modules)), file=sys.stderr)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    loaded = set(json.loads(proc.stderr.strip().splitlines()[-1]))
    assert not [m for m in HEAVY if m in loaded], "heavy modules imported on the --help path"


def test_every_command_has_help():
    runner = CliRunner()
    result = runner.invoke(app, ["--help"])
    assert result.exit_code == 0
    import typer.main

    from rfsafe.cli import _COMMAND_MODULES

    group = typer.main.get_command(app)
    assert len(group.commands) >= len(_COMMAND_MODULES)
    for name, cmd in group.commands.items():
        assert cmd.help and cmd.help.strip(), f"command {name} has no help"
        sub = runner.invoke(app, [name, "--help"])
        assert sub.exit_code == 0, name
        assert "Usage:" in sub.stdout


def test_version():
    from rfsafe import __version__

    result = CliRunner().invoke(app, ["--version"])
    assert result.exit_code == 0
    assert result.stdout.strip() == f"rfsafe {__version__}"


def test_unknown_command_is_one_error_line():
    result = CliRunner().invoke(app, ["frobnicate"])
    assert result.exit_code == 2
    assert result.stderr.strip().splitlines() == ["Error: No such command 'frobnicate'."]
