"""Packaging: data files ship in a wheel (not only in an editable install); the demo regenerates its PDFs."""

import subprocess
import sys
import zipfile
from pathlib import Path

from typer.testing import CliRunner

from rfsafe.cli import app

ROOT = Path(__file__).resolve().parent.parent
DATA_SUFFIXES = {".csv", ".toml", ".ttf"}


def test_wheel_contains_every_package_data_file(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w", str(tmp_path),
                           str(ROOT)], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    (wheel,) = tmp_path.glob("rfsafe-*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    expected = {p.relative_to(ROOT).as_posix() for p in (ROOT / "rfsafe").rglob("*")
                if p.is_file() and (p.suffix in DATA_SUFFIXES or p.name.startswith("LICENSE"))}
    assert expected, "no package data found"
    assert expected <= names, sorted(expected - names)
    assert "rfsafe/limits/data/sources.toml" in names and "rfsafe/feedline/data/cables.csv" in names


def test_demo_regenerates_the_committed_worksheets_byte_for_byte():
    pdfs = ["demo_station.pdf", "demo_wire_station.pdf", "event_field_day.pdf"]
    before = {name: (ROOT / "reports_demo" / name).read_bytes() for name in pdfs
              if (ROOT / "reports_demo" / name).exists()}
    result = CliRunner().invoke(app, ["demo"])
    assert result.exit_code == 0, result.stderr
    assert "VERDICT: COMPLIES" in result.stdout
    for name in pdfs:
        data = (ROOT / "reports_demo" / name).read_bytes()
        assert data.startswith(b"%PDF-")
        if name in before:
            assert data == before[name], f"{name} is not reproducible"
