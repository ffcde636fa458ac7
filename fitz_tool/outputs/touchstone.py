"""The fitted model as a Touchstone file (written with scikit-rf) for circuit and EM simulators.

A ``.s1p`` file is the model's reflection, S11 = (Z - Z0) / (Z + Z0) (scikit-rf ``z2s``). A ``.s2p`` file is
the model placed in a through line as ``through`` says, from its ABCD matrix (scikit-rf ``a2s``; common
practice, no source):

* series (part between port 1 and port 2): [[1, Z], [0, 1]], so S21 = 2 Z0 / (Z + 2 Z0);
* shunt (part from the line to ground): [[1, 0], [1/Z, 1]], so S21 = 2 Z / (2 Z + Z0).

Values are written in RI form at full precision (Python's shortest round-trip repr), frequency in Hz, the
reference impedance on the option line (``R``) and stated in a comment with the model and its values.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import skrf

from ..exceptions import InputError
from ..results import FitResult
from ..units import format_quantity

__all__ = ["curve_frequencies", "model_network", "to_touchstone"]


def curve_frequencies(fmin: float, fmax: float, points: int) -> np.ndarray:
    """``points`` frequencies in Hz, log-spaced from ``fmin`` to ``fmax`` (both included)."""
    if not (np.isfinite(fmin) and np.isfinite(fmax) and 0 < fmin < fmax):
        raise InputError(f"--curve-band: need 0 < FMIN < FMAX, got {fmin:g} Hz and {fmax:g} Hz")
    if points < 2:
        raise InputError(f"--curve-band: need at least 2 points, got {points}")
    return np.geomspace(fmin, fmax, points)


def model_network(result: FitResult, frequency: np.ndarray | None = None, nports: int = 1,
                  through: str | None = None, z0: float = 50.0) -> skrf.Network:
    """The fitted model as a scikit-rf Network.

    Parameters
    ----------
    result : FitResult
        The fit whose model is exported.
    frequency : ndarray or None
        Frequencies in Hz (ascending, > 0); default the measured ones.
    nports : int
        1 (reflection) or 2 (through line, ``through`` needed).
    through : str or None
        ``"series"`` or ``"shunt"`` for a 2-port.
    z0 : float
        Real, positive reference impedance in ohm.
    """
    f = result.measurement.frequency if frequency is None else np.asarray(frequency, dtype=float)
    if not (np.isfinite(z0) and z0 > 0):
        raise InputError(f"Touchstone reference impedance must be a positive number of ohm, got {z0!r}")
    z = np.asarray(result.model_impedance(f), dtype=complex)
    if not np.all(np.isfinite(z)):
        bad = f[~np.isfinite(z)]
        raise InputError(f"the model's impedance is not finite at {format_quantity(bad[0], 'Hz')}; "
                         f"choose a --curve-band that avoids it")
    freq = skrf.Frequency.from_f(f, unit="Hz")
    if nports == 1:
        s = skrf.network.z2s(z.reshape(-1, 1, 1), z0)
    elif nports == 2:
        abcd = np.zeros((f.size, 2, 2), dtype=complex)
        abcd[:, 0, 0] = abcd[:, 1, 1] = 1
        if through == "series":
            abcd[:, 0, 1] = z
        elif through == "shunt":
            if np.any(z == 0):
                raise InputError("the model's impedance is 0 at some frequency: no shunt 2-port there")
            abcd[:, 1, 0] = 1 / z
        else:
            raise InputError("a .s2p model export needs --through series or --through shunt (how the part "
                             "sits in the line)")
        s = skrf.network.a2s(abcd, z0)
    else:
        raise InputError(f"Touchstone export is for 1 or 2 ports, not {nports}")
    return skrf.Network(frequency=freq, s=s, z0=z0, name="fitted_model")


def to_touchstone(result: FitResult, path: str | Path, frequency: np.ndarray | None = None,
                  through: str | None = None, z0: float = 50.0) -> str:
    """The model as Touchstone 1.1 text for ``path`` (``.s1p`` reflection or ``.s2p`` through line).

    Returns the text (written by the caller, all outputs at once); the port count comes from the suffix.
    """
    suffix = Path(path).suffix.lower()
    if suffix not in (".s1p", ".s2p"):
        raise InputError(f"--touchstone {path}: name the file .s1p (reflection) or .s2p (through line)")
    nports = int(suffix[2])
    network = model_network(result, frequency, nports, through, z0)
    values = ", ".join(f"{name} = {format_quantity(p.value, p.unit)}"
                       for name, p in result.parameters.items())
    how = "reflection S11" if nports == 1 else f"part in {through} in a through line"
    network.comments = (f" fitz_tool model export: {result.circuit.expression} ({values})\n"
                        f" {how}, reference impedance {z0:g} ohm at every port, "
                        f"{network.frequency.npoints} points {format_quantity(network.f[0], 'Hz')} to "
                        f"{format_quantity(network.f[-1], 'Hz')}")
    text = network.write_touchstone(return_string=True, form="ri", skrf_comment=True)
    return text
