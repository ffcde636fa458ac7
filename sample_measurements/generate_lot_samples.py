"""Write the bundled sample lot ``sample_measurements/lot_chokes/`` from known circuits plus bench noise.

Invented scenario: project Kestrel's incoming check of its L3 output choke (22 uH nominal): four chokes
from one reel, each measured on the impedance analyzer at three DC bias currents (0, 3 and 6 A) through a
bias tee. The chokes soften with bias, L(I) = L0 / (1 + (I / I_sat)^2) (an invented soft-saturation law),
so the lot shows saturation against ``bias_A``. Twelve files of 41 points, 10 kHz to 30 MHz, in two
layouts (|Z| and phase CSV; R and X in a tab-separated text file), and ``manifest.csv`` listing file, part
and bias. Noise: 0.3 % in |Z| and 0.1 deg in phase (1 sigma), fixed seed, so running this again writes
identical files::

    python sample_measurements/generate_lot_samples.py

The true values (``CHOKES``, ``I_SAT``) are for the demo only, never check values for tests. Only numpy.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent / "lot_chokes"
SEED = 20240611
#: Each choke's zero-bias inductance L0 (H), winding resistance Rs (ohm), winding capacitance Cp (F) and
#: core-loss resistance Rp (ohm) across the part.
CHOKES: dict[str, dict[str, float]] = {
    "L3-01": {"L0": 22.4e-6, "Rs": 17e-3, "Cp": 11.5e-12, "Rp": 15.5e3},
    "L3-02": {"L0": 21.1e-6, "Rs": 19e-3, "Cp": 12.4e-12, "Rp": 14.2e3},
    "L3-03": {"L0": 23.0e-6, "Rs": 18e-3, "Cp": 12.0e-12, "Rp": 16.1e3},
    "L3-04": {"L0": 21.7e-6, "Rs": 20e-3, "Cp": 12.9e-12, "Rp": 13.8e3},
}
#: Soft-saturation current of the invented law above (A).
I_SAT = 9.0
BIAS_A = (0.0, 3.0, 6.0)


def z_choke(f: np.ndarray, L: float, Rs: float, Cp: float, Rp: float) -> np.ndarray:
    """(Rs + L) in parallel with Cp and Rp (ohm)."""
    w = 2 * np.pi * f
    return 1 / (1 / (Rs + 1j * w * L) + 1j * w * Cp + 1 / Rp)


def main() -> None:
    rng = np.random.default_rng(SEED)
    HERE.mkdir(exist_ok=True)
    f = np.geomspace(10e3, 30e6, 41)
    manifest = ["file,part,bias_A"]
    for n, (part, truth) in enumerate(CHOKES.items()):
        for bias in BIAS_A:
            L = truth["L0"] / (1 + (bias / I_SAT) ** 2)
            z = z_choke(f, L, truth["Rs"], truth["Cp"], truth["Rp"])
            z = np.abs(z) * (1 + 0.003 * rng.standard_normal(f.size)) * np.exp(
                1j * (np.angle(z) + np.radians(0.1) * rng.standard_normal(f.size)))
            stem = f"{part}_{bias:g}A"
            if n % 2 == 0:
                name = f"{stem}.csv"
                lines = [f"# impedance analyzer, project Kestrel incoming check, part {part}, "
                         f"DC bias {bias:g} A",
                         "Frequency (Hz),|Z| (Ohm),Phase (deg)"]
                lines += [f"{fk:.7g},{abs(zk):.7g},{np.degrees(np.angle(zk)):.7g}"
                          for fk, zk in zip(f, z, strict=True)]
            else:
                name = f"{stem}.txt"
                lines = ["Frequency (kHz)\tR (Ohm)\tX (Ohm)"]
                lines += [f"{fk / 1e3:.7g}\t{zk.real:.7g}\t{zk.imag:.7g}"
                          for fk, zk in zip(f, z, strict=True)]
            (HERE / name).write_text("\n".join(lines) + "\n", encoding="utf-8")
            manifest.append(f"{name},{part},{bias:g}")
    (HERE / "manifest.csv").write_text("\n".join(manifest) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
