"""Benchmark: large stations — worksheets and ``evaluate --json`` linear in places x configurations.

The large stations are invented here: the demo station's transmitters, feedlines and antennas with
``n_places`` places on a grid around the house and ``n_configurations`` configurations cycling through
the demo's bands. Each command runs in its own process; the script prints its CPU time (user + system,
from ``getrusage``: on the shared machine wall time swells with the load, CPU time does not) beside the
wall time, and its peak resident memory.

Floor (measured in the same run): the same command on the demo-sized station (5 places, 4
configurations), scaled by the ratio of place x configuration counts. A command linear in places x
configurations stays near 1x of this floor plus its fixed cost; the issue-18 targets are absolute
(under 30 s and 300 MB for the worksheets, under 1 GB for 10,000 x 50 ``evaluate --json``).

The stations stay within rfsafe's own input bounds (rfsafe/bounds.py: 10,000 places, 500,000
place-configuration pairs, 4 MB files), so the runs are the command as a user would run it. ``report``
includes the remedies (``with_answers``), whose cost grows with places x configurations on its own;
``evaluate --json`` also computes the plot data (near-field maps, plan).

Not a test: it prints, it asserts nothing.

Run: ``python3 benchmarks/bench_scale.py [case ...]`` with cases ``report-1x10000``, ``report-50x400``,
``json-10000x50`` (default: all), or ``N_PLACESxN_CONFIGS`` pairs for a quick look (``report-1x1000``).
"""

from __future__ import annotations

import math
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "reports_demo" / "demo_station.toml"

_BANDS = [  # (freq_mhz, transmitter, feedline, antenna, mode, swr)
    (7.15, "hf-transceiver", "coax-dipole", "dipole-40m", "ssb", 1.6),
    (7.03, "hf-amplifier", "coax-dipole", "dipole-40m", "cw", 1.3),
    (14.2, "hf-amplifier", "coax-beam", "beam-20m", "ssb-processed", 1.4),
    (145.5, "vhf-fm", "coax-vhf", "collinear-2m", "fm", 1.3),
]


def large_station_text(n_places: int, n_configurations: int) -> str:
    """An invented station: the demo's equipment with many places and configurations."""
    text = DEMO.read_text(encoding="utf-8")
    head = text[:text.index("[[configurations]]")]
    first_table = head.index("[[transmitters]]")
    out = [head[:first_table], head[first_table:]]
    for i in range(n_configurations):
        f, tx, fl, ant, mode, swr = _BANDS[i % len(_BANDS)]
        f = f * (1.0 + 0.001 * (i // len(_BANDS)))      # distinct frequencies within the band
        out.append(f'[[configurations]]\nid = "cfg-{i:03d}"\nfreq_mhz = {f:.5f}\ntransmitter = "{tx}"\n'
                   f'feedline = "{fl}"\nantenna = "{ant}"\nmode = "{mode}"\nswr = {swr}\n'
                   'schedule = { on_minutes = 10.0, off_minutes = 10.0 }\n\n')
    side = math.ceil(math.sqrt(n_places))
    rows = []
    for k in range(n_places):      # inline tables: 10,000 places take about 0.8 MB
        ix, iy = k % side, k // side
        x = -40.0 + 80.0 * (ix + 0.5) / side
        y = -40.0 + 80.0 * (iy + 0.5) / side
        env = "controlled" if k % 7 == 0 else "uncontrolled"
        rows.append(f'{{label="P{k:05d}",x_m={x:.2f},y_m={y:.2f},height_m={1.2 + 0.5 * (k % 5):.1f},'
                    f'environment="{env}"}}')
    # the array of places must come before the [[tables]] in TOML: put it at the top level
    out.insert(1, "places = [\n" + ",\n".join(rows) + "\n]\n\n")
    return "".join(out)


_CHILD = r"""
import resource, runpy, sys, time
sys.argv = ["rfsafe"] + sys.argv[1:]
w0 = time.perf_counter()
try:
    runpy.run_module("rfsafe", run_name="__main__")
except SystemExit as e:
    code = e.code
else:
    code = 0
r = resource.getrusage(resource.RUSAGE_SELF)
sys.stderr.write(f"\nBENCH {r.ru_utime + r.ru_stime:.3f} {time.perf_counter() - w0:.3f} {r.ru_maxrss / 1024:.1f} {code}\n")
"""


def run_cli(args: list[str], stdout=subprocess.DEVNULL) -> tuple[float, float, float]:
    """(CPU s, wall s, peak RSS MB) of ``rfsafe <args>`` in a fresh process."""
    p = subprocess.run([sys.executable, "-c", _CHILD, *args], stdout=stdout, stderr=subprocess.PIPE, text=True,
                       cwd=ROOT)
    line = [ln for ln in p.stderr.splitlines() if ln.startswith("BENCH ")]
    if not line:
        raise RuntimeError(p.stderr[-2000:])
    cpu, wall, rss, code = line[-1].split()[1:]
    if code not in ("0", "1", "None"):
        raise RuntimeError(f"exit {code}: {p.stderr[-2000:]}")
    return float(cpu), float(wall), float(rss)


def case(kind: str, n_places: int, n_configs: int, tmp: Path, floor: dict) -> None:
    station = tmp / f"large_{n_places}x{n_configs}.toml"
    station.write_text(large_station_text(n_places, n_configs), encoding="utf-8")
    if kind == "report":
        args = ["report", str(station), "--output", str(tmp / "large.pdf"), "--force"]
    else:
        args = ["evaluate", str(station), "--json"]
    with open(tmp / "out.json", "w") as sink:
        cpu, wall, rss = run_cli(args, stdout=sink)
    extra = ""
    if kind == "json":
        extra = f", {(tmp / 'out.json').stat().st_size / 1e6:.1f} MB of JSON"
    elif (tmp / "large.pdf").exists():
        extra = f", {(tmp / 'large.pdf').stat().st_size / 1e6:.1f} MB PDF"
    scale = n_places * n_configs / (5 * 4)
    f_cpu = floor[kind]
    print(f"{kind:6s} {n_configs:3d} configurations x {n_places:6d} places: CPU {cpu:7.1f} s (wall {wall:7.1f} s), "
          f"peak RSS {rss:7.0f} MB{extra}")
    print(f"       per place x configuration: {1e3 * cpu / (n_places * n_configs):.2f} ms CPU; "
          f"demo floor {1e3 * f_cpu / 20:.2f} ms (ratio {cpu / (f_cpu * scale):.2f}x of demo CPU scaled linearly)")


def main(cases: list[str]) -> None:
    with tempfile.TemporaryDirectory() as tmpd:
        tmp = Path(tmpd)
        floor = {}
        for kind, args in (("report", ["report", str(DEMO), "--output", str(tmp / "demo.pdf"), "--force"]),
                           ("json", ["evaluate", str(DEMO), "--json"])):
            cpu, wall, rss = run_cli(args)
            floor[kind] = cpu
            print(f"floor: {kind} of the demo station (4 configurations x 5 places): CPU {cpu:.2f} s "
                  f"(wall {wall:.2f} s), peak RSS {rss:.0f} MB")
        for c in cases:
            kind, _, dims = c.partition("-")
            a, b = (int(v) for v in dims.split("x"))
            n_configs, n_places = (a, b) if kind == "report" else (b, a)
            case(kind, n_places, n_configs, tmp, floor)
    print("targets: report 1 x 10000 and 50 x 400 each under 30 s and 300 MB; evaluate --json 10000 x 50 under 1 GB")


if __name__ == "__main__":
    main(sys.argv[1:] or ["report-1x10000", "report-50x400", "json-10000x50"])
