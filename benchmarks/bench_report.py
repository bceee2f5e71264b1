"""Benchmark: wall time of the demo worksheet through the ``rfsafe report`` path (load + assess + render).

Floor: a minimal reportlab document (one page, one paragraph in the embedded DejaVu Sans) built in
the same run, so the ratio says how much the worksheet costs over reportlab's own fixed cost.
Target: the full path under 2 s on the shared 2-core machine.

Run: ``/work/venv/bin/python benchmarks/bench_report.py [repeats]``
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

DEMOS = [Path(__file__).resolve().parent.parent / "reports_demo" / name
         for name in ("demo_station.toml", "demo_wire_station.toml")]
TARGET_S = 2.0


def _best(fn, repeats: int) -> tuple[float, float]:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times)


def main(repeats: int = 5) -> None:
    for demo in DEMOS:
        bench(demo, repeats)


def bench(DEMO: Path, repeats: int) -> None:
    t0 = time.perf_counter()
    from rfsafe.assess import assess
    from rfsafe.report.common import build_pdf, p
    from rfsafe.report.worksheet import build_worksheet_pdf, write_worksheet
    from rfsafe.station import load_station
    import_s = time.perf_counter() - t0

    def fresh():
        return assess(load_station(DEMO))

    t0 = time.perf_counter()
    first = build_worksheet_pdf(assess(load_station(DEMO)))   # first build: font parsing, caches
    first_s = time.perf_counter() - t0

    def minimal():
        return build_pdf([p("rfsafe benchmark floor: one paragraph.")], title="floor", author="", subject="",
                         date_iso="2026-01-01", header_left="", header_right="", footer_left="")

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo.pdf"

        def cli_path():
            write_worksheet(fresh(), out, force=True)

        floor_best, floor_med = _best(minimal, repeats)
        full_best, full_med = _best(cli_path, repeats)
        res = assess(load_station(DEMO))
        load_best, _ = _best(fresh, repeats)
        render_best, _ = _best(lambda: build_worksheet_pdf(res), repeats)
        size = out.stat().st_size

    print(f"== {DEMO.name}")
    print(f"demo worksheet: {len(first)} bytes in memory, {size} bytes on disk")
    print(f"imports (assess, station, report):        {import_s * 1e3:8.1f} ms")
    print(f"first build (fonts parsed, caches cold):  {first_s * 1e3:8.1f} ms")
    print(f"minimal reportlab document (floor):       {floor_best * 1e3:8.1f} ms best, {floor_med * 1e3:.1f} ms median")
    print(f"load + assess:                            {load_best * 1e3:8.1f} ms best")
    print(f"render worksheet:                         {render_best * 1e3:8.1f} ms best")
    print(f"report path (load + assess + render + write): {full_best * 1e3:8.1f} ms best, "
          f"{full_med * 1e3:.1f} ms median")
    print(f"ratio report path / floor:                {full_best / floor_best:8.1f}x")
    cold = import_s + first_s
    print(f"cold path (imports + first build):        {cold * 1e3:8.1f} ms; target {TARGET_S:.1f} s: "
          f"{'met' if cold < TARGET_S and full_best < TARGET_S else 'NOT met'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 5)
