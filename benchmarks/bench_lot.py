"""Benchmark of lots: parts per second with 1 and 2 workers, and the per-part cost against the API.

Run ``python benchmarks/bench_lot.py`` (``--parts 40`` for a short run); not part of the test suite. Writes
a lot of generated chokes (``(Rs + L1) || Cp``, values spread over +/- 10 %, 201 points 1 kHz-30 MHz,
0.2 % / 0.1 deg noise, |Z|/phase CSV) into a temporary folder and prints:

1. parts per second of ``fitz_tool.lot.run_lot`` with a fixed model, a new store each time, 1 worker
   (in-process) and 2 worker processes (process pool, start-up included: workers forked from this process,
   several parts per task); target: 2 workers >= 1.7 x one;
2. the per-part cost with 1 worker divided by a single in-process API fit of the same files
   (``read_measurement`` + ``fit`` + ``design_values``, run first in the same process; total time / parts
   for both, the API's median printed too); target <= 1.3. The lot's part
   also computes the uncertainty budget, the JSON record and writes the store.

The machine running it may be shared: the figures are wall-clock times and say so; the CPU time inside each
part's job shows whether a worker waited for a core (a speed-up needs free cores: on Linux with
``sched_autogroup_enabled`` all processes of one terminal session share one session's slice of the CPU).
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import fitz_tool as ft  # noqa: E402
from fitz_tool.lot import LotSettings, collect_files, run_lot  # noqa: E402

MODEL = "(Rs + L1) || Cp || Rp"


def write_lot(folder: Path, parts: int, points: int, seed: int = 1) -> None:
    """Generated chokes: Z = (Rs + j w L) || (1 / j w Cp) || Rp (common practice, no source); invented."""
    rng = np.random.default_rng(seed)
    f = np.geomspace(1e3, 30e6, points)
    w = 2 * np.pi * f
    for k in range(parts):
        L, Rs, Cp = 22e-6 * (1 + 0.1 * rng.uniform(-1, 1)), 0.02 * (1 + 0.2 * rng.uniform(-1, 1)), 12e-12
        z = 1 / (1 / (Rs + 1j * w * L) + 1j * w * Cp + 1 / 15e3)
        z = np.abs(z) * (1 + 2e-3 * rng.standard_normal(points)) * np.exp(
            1j * (np.angle(z) + np.radians(0.1) * rng.standard_normal(points)))
        rows = ["Frequency (Hz),|Z| (Ohm),Phase (deg)"]
        rows += [f"{fk:.9g},{abs(zk):.9g},{np.degrees(np.angle(zk)):.9g}"
                 for fk, zk in zip(f, z, strict=True)]
        (folder / f"choke_{k:04d}.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")


def api_cost(files: list[str], at: float) -> tuple[float, float]:
    """Seconds per part of the plain API on these files: mean (total / parts, as the lot's figure) and
    median."""
    times = []
    for file in files:
        start = time.perf_counter()
        m = ft.read_measurement(file)
        ft.design_values(ft.fit(m, MODEL), [at])
        times.append(time.perf_counter() - start)
    return statistics.fmean(times), statistics.median(times)


def lot_rate(folder: Path, workers: int, store: Path) -> tuple[float, int, float, float]:
    """Parts per second (wall clock), errors, and the median wall and CPU seconds inside one part's job."""
    items = collect_files([str(folder)])
    start = time.perf_counter()
    result = run_lot(items, LotSettings(model=MODEL, at={"100k": 100e3}), store=store, workers=workers)
    elapsed = time.perf_counter() - start
    payloads = list(result.payloads.values())
    return (len(items) / elapsed, result.n_errors, statistics.median(p["elapsed_s"] for p in payloads),
            statistics.median(p["cpu_s"] for p in payloads))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=200)
    parser.add_argument("--points", type=int, default=201)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "lot"
        folder.mkdir()
        write_lot(folder, args.parts, args.points)
        files = sorted(str(p) for p in folder.iterdir())
        api_cost(files[:3], 100e3)  # warm-up: imports and caches
        per_api, median_api = api_cost(files, 100e3)
        rate1, errors1, wall1, cpu1 = lot_rate(folder, 1, Path(tmp) / "one.sqlite")
        rate2, errors2, wall2, cpu2 = lot_rate(folder, 2, Path(tmp) / "two.sqlite")
    load = os.getloadavg()[0]
    print(f"lot of {args.parts} parts x {args.points} points, model {MODEL!r}, {os.cpu_count()} cores, "
          f"load average {load:.1f} at the end (a shared machine; wall-clock figures)")
    print(f"(1) 1 worker: {rate1:.2f} parts/s; 2 workers: {rate2:.2f} parts/s; speed-up {rate2 / rate1:.2f} "
          f"(target >= 1.7); errors {errors1}, {errors2}")
    print(f"    inside a part's job (median): 1 worker {1e3 * wall1:.1f} ms wall / {1e3 * cpu1:.1f} ms CPU; "
          f"2 workers {1e3 * wall2:.1f} ms wall / {1e3 * cpu2:.1f} ms CPU each")
    print(f"    CPU-bound ceiling of the speed-up with 2 free cores: 2 x {cpu1 * 1e3:.1f} / "
          f"{cpu2 * 1e3:.1f} = {2 * cpu1 / cpu2:.2f}; a job slower in wall time than in CPU time waited "
          "for a core")
    print(f"(2) per part (total / parts): lot {1e3 / rate1:.1f} ms, API fit {1e3 * per_api:.1f} ms "
          f"(median {1e3 * median_api:.1f} ms), ratio {1 / rate1 / per_api:.2f} (target <= 1.3; against the "
          f"median {1 / rate1 / median_api:.2f})")


if __name__ == "__main__":
    main()
