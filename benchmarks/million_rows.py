"""One bench file of a million rows: time and peak memory of inspect and of a fit with every output.

    python benchmarks/million_rows.py              # 1,000,000 rows
    python benchmarks/million_rows.py --rows 100000

Targets (issue of hostile inputs): inspect <= 10 s; fit with all outputs <= 60 s and <= 1 GB; SVG <= 5 MB.
Each command runs in its own process; peak memory is that child's own maximum resident set size (wait4).
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def write_table(path: Path, rows: int) -> None:
    """|Z| and phase of an invented 22 uH choke (50 mohm, 10 pF), 0.5 % noise, log-spaced 100 Hz - 100 MHz."""
    rng = np.random.default_rng(4812)
    f = np.logspace(2, 8, rows)
    jw = 2j * np.pi * f
    series = 0.05 + jw * 22e-6
    z = series / (1 + series * jw * 10e-12) * (1 + 0.005 * rng.standard_normal(rows))
    table = np.column_stack([f, np.abs(z), np.degrees(np.angle(z))])
    with path.open("w") as handle:
        handle.write("Frequency (Hz),|Z| (ohm),Phase (deg)\n")
        np.savetxt(handle, table, delimiter=",", fmt="%.9g")


def run(argv: list[str]) -> tuple[float, float, int, str]:
    """(wall seconds, peak MB of this child alone, exit code, last stderr line)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), MPLBACKEND="Agg")
    with tempfile.TemporaryFile("w+") as err:
        start = time.perf_counter()
        child = subprocess.Popen([sys.executable, "-m", "fitz_tool.cli", *argv], stdout=subprocess.DEVNULL,
                                 stderr=err, env=env, text=True)
        _, status, usage = os.wait4(child.pid, 0)  # this child's own resource usage
        seconds = time.perf_counter() - start
        child.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        last = (err.read().strip().splitlines() or [""])[-1]
    return seconds, usage.ru_maxrss / 1024, child.returncode, last  # ru_maxrss in kB on Linux


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        bench = folder / "million.csv"
        write_table(bench, args.rows)
        print(f"file: {args.rows:,} rows, {bench.stat().st_size / 1e6:.1f} MB")
        seconds, peak, code, last = run(["inspect", str(bench), "--plot", str(folder / "inspect.svg")])
        svg = folder / "inspect.svg"
        print(f"inspect --plot .svg: {seconds:.1f} s, peak {peak:.0f} MB, exit {code} {last}; "
              f"SVG {svg.stat().st_size / 1e6 if svg.exists() else float('nan'):.2f} MB")
        out = folder / "out"
        seconds, peak, code, last = run(["fit", str(bench), "--model", "Rs + L1 || Cp", "--json",
                                         str(out / "r.json"), "--curve", str(out / "c.csv"), "--spice",
                                         str(out / "p.cir"), "--report", str(out / "r.html"),
                                         "--plot-dir", str(out / "plots")])
        files = [p for p in out.rglob("*") if p.is_file()] if out.exists() else []
        sizes = {p.name: p.stat().st_size / 1e6 for p in files}
        largest_svg = max((v for k, v in sizes.items() if k.endswith(".svg")), default=float("nan"))
        print(f"fit with all outputs: {seconds:.1f} s, peak {peak:.0f} MB, exit {code} {last}; "
              f"largest SVG {largest_svg:.2f} MB, report {sizes.get('r.html', float('nan')):.2f} MB, "
              f"curve {sizes.get('c.csv', float('nan')):.1f} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
