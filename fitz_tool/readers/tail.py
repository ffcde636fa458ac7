"""The shared tail of every text reader: drop the rows Z cannot use, sort, drop repeats, say what was read.

Rules (each drop is counted in the warnings with its lines; nothing is silent):

* frequency 0 Hz (a DC point has no phase): dropped;
* impedance not finite (a reading of 0 divides): dropped;
* |Z| = 0 (no phase, no logarithm): dropped;
* rows out of order: sorted by frequency, recorded in the steps;
* a repeated frequency with the same reading: dropped; with a different reading: an error naming both lines.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..exceptions import InputError
from .forms import form_words

__all__ = ["drop_rows", "finish_rows", "describe"]


def describe(form: str, shunt: float | None = None, reference: float | None = None, stated: bool = False,
             columns: Mapping[str, str] | None = None) -> str:
    """What was read, in plain words (``"voltage across the part and across a 0.1 ohm shunt"``)."""
    text = form_words(form, shunt, reference) or form
    if form == "simulator_complex" and columns:
        if "z_complex" in columns:
            text = f"complex impedance {columns['z_complex']} from a circuit-simulator export"
        elif "v_complex" in columns and shunt and "i_complex" in columns:
            text = (f"voltage {columns['v_complex']} across the part and {columns['i_complex']} across a "
                    f"{shunt:g} ohm shunt, from a circuit-simulator export")
        elif "v_complex" in columns:
            text = (f"voltage {columns['v_complex']} across the part and current {columns.get('i_complex')}, "
                    f"from a circuit-simulator export")
    return text + (", with a stated standard uncertainty for each point" if stated else "")


def _lines(lines: np.ndarray, mask: np.ndarray) -> str:
    picked = [str(n) for n in lines[mask][:5]]
    return ", ".join(picked) + ("..." if int(mask.sum()) > 5 else "")


def drop_rows(keep: np.ndarray, mask: np.ndarray, reason: str, lines: np.ndarray,
              warnings: list[str]) -> None:
    """Clear ``keep`` where ``mask`` is set, counting the rows (and naming their lines) in the warnings."""
    hit = mask & keep
    if hit.any():
        warnings.append(f"dropped {int(hit.sum())} row(s) {reason} (line(s) {_lines(lines, hit)})")
        keep &= ~hit


def finish_rows(frequency: np.ndarray, z: np.ndarray, lines: np.ndarray, keep: np.ndarray, steps: list[str],
                warnings: list[str], where: str, carried: tuple[np.ndarray, ...] = ()
                ) -> tuple[np.ndarray, np.ndarray, tuple[np.ndarray, ...]]:
    """Drop, sort and de-duplicate rows (module rules); arrays are per file row, ``keep`` the rows still in.

    Returns frequency (Hz, ascending, unique), Z (ohm) and the ``carried`` per-row arrays (sigmas, noise
    coefficients) in the same order.
    """
    keep = keep.copy()
    drop_rows(keep, frequency == 0, "at 0 Hz (a DC point has no phase)", lines, warnings)
    drop_rows(keep, ~np.isfinite(z), "where the impedance is undefined (a reading of 0 divides)", lines,
              warnings)
    drop_rows(keep, z == 0, "with |Z| = 0 (no phase, no logarithm)", lines, warnings)
    if not keep.any():
        raise InputError(f"{where}: no usable row left ({'; '.join(warnings)})")
    f, z, lines = frequency[keep], z[keep], lines[keep]
    extra = [s[keep] for s in carried]
    order = np.argsort(f, kind="stable")
    if np.any(np.diff(f) < 0):
        how = "descending" if np.all(np.diff(f) <= 0) else "no"
        steps.append(f"sorted {f.size} rows by frequency (the file lists them in {how} order)")
    f, z, lines = f[order], z[order], lines[order]
    extra = [s[order] for s in extra]
    repeat = np.concatenate([[False], np.diff(f) == 0])
    for k in np.flatnonzero(repeat):
        if not np.isclose(z[k], z[k - 1], rtol=1e-12, atol=0.0):
            raise InputError(f"{where}: lines {lines[k - 1]} and {lines[k]} are both at {f[k]:g} Hz with "
                             f"different readings; delete one of them")
    if repeat.any():
        warnings.append(f"dropped {int(repeat.sum())} repeated row(s) with the same frequency and reading "
                        f"(line(s) {_lines(lines, repeat)})")
    return f[~repeat], z[~repeat], tuple(s[~repeat] for s in extra)
