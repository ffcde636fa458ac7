"""Generated lots for the lot tests: known circuits written in several bench layouts (invented data)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

MODEL = "Rs + L1"
NOMINAL_L = 22e-6
F = np.geomspace(1e3, 1e6, 21)


def impedance(L1: float, Rs: float) -> np.ndarray:
    """Series R-L (ohm) on the test grid, e^{+jwt}: Z = Rs + j w L (common practice, no source)."""
    return Rs + 2j * np.pi * F * L1


def _noisy(z: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    return np.abs(z) * (1 + 1e-3 * rng.standard_normal(z.size)) * np.exp(
        1j * (np.angle(z) + np.radians(0.05) * rng.standard_normal(z.size)))


def write_part(path: Path, z: np.ndarray, layout: int) -> Path:
    """One file in one of four layouts: |Z|/phase CSV, R/X tab text, semicolon with decimal comma, S11."""
    if layout == 0:
        path = path.with_suffix(".csv")
        rows = ["Frequency (Hz),|Z| (Ohm),Phase (deg)"]
        rows += [f"{f:.9g},{abs(v):.9g},{np.degrees(np.angle(v)):.9g}" for f, v in zip(F, z, strict=True)]
    elif layout == 1:
        path = path.with_suffix(".txt")
        rows = ["Frequency (kHz)\tR (Ohm)\tX (Ohm)"]
        rows += [f"{f / 1e3:.9g}\t{v.real:.9g}\t{v.imag:.9g}" for f, v in zip(F, z, strict=True)]
    elif layout == 2:
        path = path.with_suffix(".csv")
        rows = ["Freq [Hz];|Z| [Ohm];Theta [deg]"]
        rows += [";".join(f"{x:.9g}".replace(".", ",") for x in (f, abs(v), np.degrees(np.angle(v))))
                 for f, v in zip(F, z, strict=True)]
    else:
        # reflection into 50 ohm, S11 = (Z - 50) / (Z + 50) (Touchstone 1.1 RI format, common practice)
        path = path.with_suffix(".s1p")
        s = (z - 50) / (z + 50)
        rows = ["! generated test part", "# HZ S RI R 50"]
        rows += [f"{f:.9g} {v.real:.12g} {v.imag:.12g}" for f, v in zip(F, s, strict=True)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def make_lot(folder: Path, n: int = 32, seed: int = 5) -> dict[str, dict[str, float]]:
    """``n`` readable parts in four layouts plus two unreadable files; returns file -> true values.

    Every third part is far outside 22 uH +/- 10 % (L = 16 uH or 29 uH), the others well inside
    (21.3 uH to 22.7 uH), so the verdict each should get is known from the truth alone.
    """
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    truth: dict[str, dict[str, float]] = {}
    for k in range(n):
        if k % 3 == 2:
            L = 16e-6 if k % 2 else 29e-6
        else:
            L = NOMINAL_L * (1 + 0.03 * (2 * rng.random() - 1))
        values = {"L1": L, "Rs": 0.05 + 0.02 * rng.random()}
        path = write_part(folder / f"part_{k:02d}", _noisy(impedance(**values), rng), k % 4)
        truth[str(path)] = values
    (folder / "part_90_garbage.csv").write_text("this is not a bench file\nat all\n", encoding="utf-8")
    (folder / "part_91_empty.txt").write_text("", encoding="utf-8")
    return truth
