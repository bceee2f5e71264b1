"""Bounded memory and time for inputs that once asked for huge allocations (tests/fuzz_support.py).

Each case runs rfsafe in a subprocess under an address-space limit of 2 GiB and must be refused as
bad input (exit 2, one Error line) while its peak resident memory stays below 600 MB; before the
bounds of rfsafe/bounds.py these asked for 300 GiB (site grid), 447 GiB (area edges) and millions of
wire segments, or were killed.
"""

from __future__ import annotations

import resource
import subprocess
import sys
import time

import pytest
from fuzz_support import DATA, DEMO, read, to_toml

from rfsafe import bounds

_LIMIT_BYTES = 2 * 1024**3
_RSS_MB = 600


def _limit():
    resource.setrlimit(resource.RLIMIT_AS, (_LIMIT_BYTES, _LIMIT_BYTES))


SITE = read(DATA / "site_wire_vertical.toml")
WIRE = read(DEMO / "wire_inverted_v_40m.toml")

CASES = {
    "site grid spacing 1 nm": ("site", to_toml({**SITE, "grid_spacing_m": 1e-9}), "grid_spacing_m"),
    "area edge 1e5 m on a 5 cm grid": ("site", to_toml({**SITE, "grid_spacing_m": 0.05, "boundary":
                                                         [[0, 0], [1, 0], [1, 1], [0, 1]], "areas": [
        {"label": "far", "kind": "public", "polygon": [[0.0, 0.0], [1e5, 0.0], [1e5, 1e5]]}]}), "areas[0].polygon"),
    "wire at 300 GHz": ("wire", to_toml({**WIRE, "freq_mhz": 3e5}), "wires[0].segments"),
    "deep nesting": ("wire", "a = " + "[" * 100_000 + "]" * 100_000 + "\n", "FILE"),
    "file above the size bound": ("wire", "# " + "x" * (bounds.MAX_FILE_BYTES + 1) + "\n", "FILE"),
}


@pytest.mark.parametrize("name", list(CASES))
def test_refused_within_bounded_memory_and_time(name, tmp_path):
    command, text, field = CASES[name]
    path = tmp_path / "input.toml"
    path.write_text(text, encoding="utf-8")
    code = ("import resource, runpy, sys; sys.argv = ['rfsafe', %r, %r]\n"
            "try:\n    runpy.run_module('rfsafe', run_name='__main__')\n"
            "finally:\n    sys.stderr.write('RSS_KB %%d\\n' %% resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)\n"
            % (command, str(path)))
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, preexec_fn=_limit, timeout=120)
    seconds = time.perf_counter() - t0
    lines = r.stderr.splitlines()
    rss_mb = int(lines[-1].split()[1]) / 1024
    assert r.returncode == 2, r.stderr
    assert len(lines) == 2 and lines[0].startswith(f"Error: {field}"), r.stderr
    assert rss_mb < _RSS_MB, f"peak resident memory {rss_mb:.0f} MB"
    assert seconds < 60, f"{seconds:.1f} s"
