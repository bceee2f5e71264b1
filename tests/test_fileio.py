"""Nothing lost on disk: output paths checked before computing, inputs never overwritten, interrupted
writes leave no temporary file and never a mix of old and new outputs.

These are properties of rfsafe's own file handling (no published source applies); the interruption
tests kill real ``rfsafe`` processes with SIGKILL and SIGTERM at random moments.
"""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app
from rfsafe.fileio import JOURNAL_MARK, TEMP_MARK, OutputSet, recover_folder

ROOT = Path(__file__).resolve().parent.parent
DEMO_SITE = ROOT / "reports_demo" / "event_field_day.toml"
DEMO_STATION = ROOT / "reports_demo" / "demo_station.toml"


def invoke(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if TEMP_MARK in p.name or JOURNAL_MARK in p.name)


@pytest.fixture
def site_copy(tmp_path):
    """The demo site with its stations, in a folder of its own, on a coarser grid (faster runs)."""
    for p in (ROOT / "reports_demo").glob("*.toml"):
        (tmp_path / p.name).write_text(p.read_text())
    site = tmp_path / DEMO_SITE.name
    text = site.read_text()
    assert "grid_spacing_m" in text
    lines = [("grid_spacing_m = 1.0" if line.startswith("grid_spacing_m") else line) for line in text.splitlines()]
    site.write_text("\n".join(lines) + "\n")
    return site


# ----------------------------------------------------------------------------- inputs as outputs

def test_site_refuses_its_own_file_as_pdf(site_copy):
    before = site_copy.read_bytes()
    r = invoke("site", site_copy, "-o", site_copy, "--force")
    assert r.exit_code == 2
    assert r.stderr == f"Error: -o: \"{site_copy}\" is one of this run's input files: choose another name for the output\n"
    assert site_copy.read_bytes() == before


def test_site_refuses_its_own_file_as_csv(site_copy):
    before = site_copy.read_bytes()
    r = invoke("site", site_copy, "--csv", site_copy, "--force")
    assert r.exit_code == 2
    assert r.stderr.startswith("Error: --csv: ")
    assert site_copy.read_bytes() == before


def test_site_refuses_a_station_file_it_names(site_copy):
    named = [line.split("=", 1)[1].strip().strip('"') for line in site_copy.read_text().splitlines()
             if line.strip().startswith("file =")]
    if not named:
        pytest.skip("the demo site names no station file")
    target = site_copy.parent / named[0]
    before = target.read_bytes()
    r = invoke("site", site_copy, "-o", target, "--force")
    assert r.exit_code == 2
    assert "is one of this run's input files" in r.stderr
    assert target.read_bytes() == before


def test_report_refuses_a_pattern_table_it_reads(tmp_path):
    table = tmp_path / "beam.csv"
    table.write_text("azimuth_deg,elevation_deg,gain_dbi\n0,0,6\n90,0,0\n180,0,-10\n270,0,0\n")
    station = tmp_path / "s.toml"
    station.write_text(textwrap.dedent("""
        standard = "fcc"
        [[transmitters]]
        id = "tx"
        pep_w = 100.0
        [[feedlines]]
        id = "line"
        cable = "RG-213"
        length_m = 10.0
        [[antennas]]
        id = "beam"
        kind = "table"
        pattern_file = "beam.csv"
        height_m = 10.0
        [[configurations]]
        id = "c"
        transmitter = "tx"
        feedline = "line"
        antenna = "beam"
        freq_mhz = 14.2
        mode = "CW"
        [[places]]
        label = "yard"
        x_m = 10.0
        y_m = 0.0
        height_m = 1.5
        environment = "uncontrolled"
        """))
    check = invoke("check", station)
    if check.exit_code != 0:
        pytest.skip(f"pattern-table station did not validate here: {check.stderr.strip()}")
    before = table.read_bytes()
    r = invoke("report", station, "-o", table, "--force")
    assert r.exit_code == 2
    assert "is one of this run's input files" in r.stderr
    assert table.read_bytes() == before


def test_output_whose_parent_is_a_file_writes_nothing(site_copy):
    blocker = site_copy.parent / "not-a-folder"
    blocker.write_text("x")
    csv = site_copy.parent / "grid.csv"
    r = invoke("site", site_copy, "--csv", csv, "-o", blocker / "site.pdf")
    assert r.exit_code == 2
    assert r.stderr == (f"Error: -o: \"{blocker / 'site.pdf'}\" cannot be written: "
                        f"'{blocker}' is a file, not a folder\n")
    assert not csv.exists()          # checked before anything is computed or written
    assert leftovers(site_copy.parent) == []


def test_two_outputs_may_not_be_the_same_file(tmp_path):
    with pytest.raises(ValueError, match="is the same file as -o"):
        OutputSet([("-o", tmp_path / "a"), ("--csv", tmp_path / "." / "a")], force=True)


def test_init_refuses_existing_without_force(tmp_path):
    p = tmp_path / "station.toml"
    p.write_text("mine")
    r = invoke("init", p)
    assert r.exit_code == 2
    assert p.read_text() == "mine"


# ----------------------------------------------------------------------------- stale files, journal

def test_stale_temporaries_of_dead_runs_are_removed(tmp_path):
    dead_pid = 2 ** 22 + 12345          # above the default pid_max: no such process
    stale = tmp_path / f".site.pdf{TEMP_MARK}{dead_pid}.x1y2"
    stale.write_bytes(b"half a pdf")
    foreign = tmp_path / ".site.pdf.part"   # not ours: never touched
    foreign.write_bytes(b"someone else's")
    with OutputSet([("-o", tmp_path / "site.pdf")], force=True) as out:
        out.write_bytes("-o", b"new")
    assert (tmp_path / "site.pdf").read_bytes() == b"new"
    assert not stale.exists()
    assert foreign.exists()


def _kill_during_commit(folder: Path, after_renames: int) -> None:
    """Run an OutputSet commit in a child process that dies (os._exit) after ``after_renames`` renames."""
    script = textwrap.dedent(f"""
        import os, pathlib
        import rfsafe.fileio as fio
        folder = pathlib.Path({str(folder)!r})
        real = os.replace
        count = [0]
        def replace(a, b):
            if count[0] == {after_renames}:
                os._exit(9)
            count[0] += 1
            real(a, b)
        fio.os.replace = replace
        with fio.OutputSet([("-o", folder / "site.pdf"), ("--csv", folder / "grid.csv")], force=True) as out:
            out.write_bytes("-o", b"NEW pdf")
            out.write_bytes("--csv", b"NEW csv")
    """)
    r = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert r.returncode == 9, r.stderr


@pytest.mark.parametrize("after_renames", [0, 1])
def test_a_set_killed_midway_never_mixes_old_and_new(tmp_path, after_renames):
    (tmp_path / "site.pdf").write_bytes(b"OLD pdf")
    (tmp_path / "grid.csv").write_bytes(b"OLD csv")
    _kill_during_commit(tmp_path, after_renames)
    present = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.name in ("site.pdf", "grid.csv")}
    # old files are removed before any new one is renamed in: no old file beside a new one
    assert not any(v.startswith(b"OLD") for v in present.values())
    recover_folder(tmp_path)          # what the next run does first
    assert (tmp_path / "site.pdf").read_bytes() == b"NEW pdf"
    assert (tmp_path / "grid.csv").read_bytes() == b"NEW csv"
    assert leftovers(tmp_path) == []


# ----------------------------------------------------------------------------- real interruptions

KILLS = int(os.environ.get("RFSAFE_KILL_RUNS", "4"))   # per signal; RFSAFE_KILL_RUNS=100 for a long run


def _run_site(site: Path, pdf: Path, csv: Path) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "rfsafe", "site", str(site), "-o", str(pdf), "--csv", str(csv),
                             "--force", "--json"], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM], ids=["SIGKILL", "SIGTERM"])
def test_killed_site_runs_leave_no_mixed_set_and_no_leftover(site_copy, sig):
    folder = site_copy.parent
    pdf, csv = folder / "out.pdf", folder / "grid.csv"
    t0 = time.monotonic()
    assert _run_site(site_copy, pdf, csv).wait() in (0, 1, 4, 5)
    full = time.monotonic() - t0
    new_pdf, new_csv = pdf.read_bytes(), csv.read_bytes()
    rng = random.Random(19)
    for _ in range(KILLS):
        pdf.write_bytes(b"OLD pdf")
        csv.write_bytes(b"OLD csv")
        proc = _run_site(site_copy, pdf, csv)
        time.sleep(rng.uniform(0.2, 1.1) * full)
        proc.send_signal(sig)
        proc.wait()
        state = {p.name: p.read_bytes() for p in (pdf, csv) if p.exists()}
        kinds = {"old" if v.startswith(b"OLD") else "new" for v in state.values()}
        assert kinds != {"old", "new"}, "an old output stands beside a new one"
        for name, v in state.items():
            assert v.startswith(b"OLD") or v in (new_pdf, new_csv), f"{name} is neither the old nor the new file"
        if sig == signal.SIGTERM:
            # caught: temporaries removed (or, inside the commit, the set finished) on the way out
            assert leftovers(folder) == []
        # the next run finishes or cleans whatever the interrupted one left
        assert _run_site(site_copy, pdf, csv).wait() in (0, 1, 4, 5)
        assert leftovers(folder) == []
        assert pdf.read_bytes() == new_pdf and csv.read_bytes() == new_csv


def test_killed_report_leaves_old_or_new_and_no_leftover(tmp_path):
    station = tmp_path / DEMO_STATION.name
    station.write_text(DEMO_STATION.read_text())
    out = tmp_path / "ws.pdf"
    cmd = [sys.executable, "-m", "rfsafe", "report", str(station), "-o", str(out), "--force"]
    t0 = time.monotonic()
    assert subprocess.run(cmd, capture_output=True).returncode in (0, 1, 4, 5)
    full = time.monotonic() - t0
    new = out.read_bytes()
    rng = random.Random(4)
    for _ in range(KILLS):
        out.write_bytes(b"OLD")
        proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.2, 1.1) * full)
        proc.send_signal(rng.choice([signal.SIGKILL, signal.SIGTERM]))
        proc.wait()
        assert out.read_bytes() in (b"OLD", new)
        assert subprocess.run(cmd, capture_output=True).returncode in (0, 1, 4, 5)
        assert leftovers(tmp_path) == []
        assert out.read_bytes() == new
