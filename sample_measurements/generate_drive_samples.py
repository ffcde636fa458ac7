"""Write the drive sample of sample_measurements/: a scope record of an output capacitor's ripple current.

Invented scenario: bench project PS-4812 (see README.md), its 48 V -> 12 V buck stage switching at 400 kHz.
The inductor's ripple current is a triangle rising for D = 12/48 = 25 % of each period, 2.4 A peak-to-peak;
the output capacitor C_OUT3 (``output_bulk_shunt_through.s2p``) carries all of it. A current probe records
6 us (2.4 periods, not whole periods: use ``--period 2.5u``) at 2 ns a sample, starting 30 % into a period,
with 4 mA rms of probe noise from a fixed seed, so running this script again writes identical bytes::

    python sample_measurements/generate_drive_samples.py

Only numpy is used. The values are invented: demo only, never test check values.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 4812
RIPPLE = {"frequency": 400e3, "peak_to_peak": 2.4, "duty": 0.25}  # Hz, A, rising fraction of the period


def triangle(t: np.ndarray, frequency: float, peak_to_peak: float, duty: float) -> np.ndarray:
    """Zero-mean triangle (A): rises for ``duty`` of each period, falls for the rest."""
    u = np.mod(t * frequency, 1.0)
    half = peak_to_peak / 2
    return np.where(u < duty, -half + peak_to_peak * u / duty, half - peak_to_peak * (u - duty) / (1 - duty))


def main() -> None:
    rng = np.random.default_rng(SEED)
    t = np.arange(3000) * 2e-9
    current = triangle(t + 0.3 / RIPPLE["frequency"], **RIPPLE) + 0.004 * rng.standard_normal(t.size)
    lines = ["Bench scope export, project PS-4812 (48 V -> 12 V buck, 400 kHz)",
             "Part: C_OUT3 output bulk capacitor, ripple current by current probe on its lead",
             "Record: 3000 points, 2 ns per point",
             "",
             "Time (us),I(C_OUT3) (A)"]
    lines += [f"{a * 1e6:.4f},{b:.5f}" for a, b in zip(t, current, strict=True)]
    (HERE / "output_bulk_ripple_current.csv").write_text("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
