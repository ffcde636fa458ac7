"""Touchstone files (the open S-parameter standard) read with scikit-rf and converted to impedance.

Three measurement forms:

==========================  ==========  ===================================  ===========================
form                        file        impedance of the part                suited to
==========================  ==========  ===================================  ===========================
``touchstone_s11``          ``.s1p``    Z = Z0 (1 + S11) / (1 - S11)          |Z| near Z0 (reflection)
``touchstone_s21_shunt``    ``.s2p``    Z = Z0/2 * S21 / (1 - S21)            low |Z| (part to ground)
``touchstone_s21_series``   ``.s2p``    Z = 2 Z0 (1 - S21) / S21              high |Z| (part in the line)
==========================  ==========  ===================================  ===========================

The two-port forms are the published shunt-through and series-through relations for equal real port
references Z0. With per-port references Z01, Z02 (real, power waves) they become, with g = sqrt(Z01 Z02),

* shunt:  S21 = 2 g Z / (Z (Z01 + Z02) + Z01 Z02)   ->   Z = S21 Z01 Z02 / (2 g - S21 (Z01 + Z02))
* series: S21 = 2 g / (Z + Z01 + Z02)                 ->   Z = 2 g / S21 - (Z01 + Z02)

(derived from the circuit; checked against scikit-rf networks in ``tests/test_touchstone.py``). Only S21 is
used; S11, S12 and S22 of a two-port file are ignored.

Noise. The analyzer's noise lives in S, not in Z. The reader assumes complex noise of equal size at every
point, additive in S (the noise floor, which dominates exactly where the conversions are ill-conditioned:
S21 -> 0 for the series form, S11 -> +/-1 for reflection). First-order propagation gives
d ln Z = (d ln Z / dS) dS, so ln|Z| and the phase each get the standard uncertainty
``|d ln Z / dS| * sigma_S``. The unknown ``sigma_S`` is a common scale, so the measurement carries
``sigma_lnmag = sigma_phase = |d ln Z / dS| = |dZ/dS| / |Z|`` with ``sigma_absolute=False``: relative weights
that stay honest near S = +/-1, with the noise level estimated from the fit residuals.

Points where the conversion is singular (|d ln Z / dS| above ``MAX_SENSITIVITY``, i.e. Z -> 0 or
Z -> infinity) and points at 0 Hz are dropped and counted in the provenance warnings.
"""

from __future__ import annotations

import hashlib
import math
import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import skrf
from skrf.io.touchstone import Touchstone

from ..exceptions import InputError
from ..measurement import Measurement, NoiseTerm, Provenance
from .touchstone_checks import checked_touchstone_text, named_text

__all__ = [
    "MAX_SENSITIVITY",
    "NetworkFile",
    "read_network",
    "read_touchstone",
    "s11_to_z",
    "s21_shunt_to_z",
    "s21_series_to_z",
    "lnz_sensitivity",
]

#: Largest usable |d ln Z / dS|: beyond it an S error of 1e-6 (below any analyzer's noise) would change Z by
#: 100 %, so the point says nothing about the part.
MAX_SENSITIVITY = 1e6

_FORMULAS = {
    "touchstone_s11": "Z = Z0 (1 + S11) / (1 - S11) (scikit-rf s2z)",
    "touchstone_s21_shunt": "Z = Z01 Z02 S21 / (2 sqrt(Z01 Z02) - S21 (Z01 + Z02)) "
                            "(Z0/2 S21/(1 - S21) for equal Z0)",
    "touchstone_s21_series": "Z = 2 sqrt(Z01 Z02) / S21 - (Z01 + Z02) (2 Z0 (1 - S21)/S21 for equal Z0)",
}
Ohms = np.ndarray | float
_UNITS = {"hz": "Hz", "khz": "kHz", "mhz": "MHz", "ghz": "GHz"}
_FORMATS = {"ma": "MA (magnitude, angle deg)", "db": "DB (dB, angle deg)", "ri": "RI (real, imaginary)"}
_PARAMETERS = {"s", "y", "z", "h", "g"}
_OPTION_HELP = "expected '# <Hz|kHz|MHz|GHz> S <MA|DB|RI> R <ohms>', e.g. '# MHz S RI R 50'"


def s11_to_z(s11: np.ndarray, z0: Ohms = 50.0) -> np.ndarray:
    """Impedance in ohm of a one-port from its reflection S11 (reference ``z0`` in ohm): Z0 (1+S11)/(1-S11).

    Uses scikit-rf's ``s2z`` (power waves; identical to the usual relation for real ``z0``).
    """
    s11 = np.asarray(s11, dtype=complex)
    z0 = np.broadcast_to(np.asarray(z0, dtype=complex), s11.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        return skrf.network.s2z(s11.reshape(-1, 1, 1), z0.reshape(-1, 1)).reshape(s11.shape)


def s21_shunt_to_z(s21: np.ndarray, z01: Ohms = 50.0, z02: Ohms = 50.0) -> np.ndarray:
    """Impedance in ohm of a part shunted to ground across a through line, from S21 (references in ohm)."""
    s21 = np.asarray(s21, dtype=complex)
    g = np.sqrt(np.multiply(z01, z02))
    with np.errstate(divide="ignore", invalid="ignore"):
        return s21 * np.multiply(z01, z02) / (2 * g - s21 * np.add(z01, z02))


def s21_series_to_z(s21: np.ndarray, z01: Ohms = 50.0, z02: Ohms = 50.0) -> np.ndarray:
    """Impedance in ohm of a part in series with a through line, from S21 (port references in ohm)."""
    s21 = np.asarray(s21, dtype=complex)
    g = np.sqrt(np.multiply(z01, z02))
    with np.errstate(divide="ignore", invalid="ignore"):
        return 2 * g / s21 - np.add(z01, z02)


def lnz_sensitivity(form: str, s: np.ndarray, z01: Ohms = 50.0, z02: Ohms = 50.0) -> np.ndarray:
    """|d ln Z / dS| of a conversion (1 per unit S): the factor from noise in S to noise in ln|Z| and phase.

    ``touchstone_s11``: d ln Z/dS11 = 2 / (1 - S11^2). Both two-port forms: |d ln Z/dS21| =
    |2 g / (S21 (2 g - S21 (Z01 + Z02)))| with g = sqrt(Z01 Z02) (the two differ only in sign).
    """
    s = np.asarray(s, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        if form == "touchstone_s11":
            return np.abs(2 / (1 - s**2))
        g = np.sqrt(np.multiply(z01, z02))
        return np.abs(2 * g / (s * (2 * g - s * np.add(z01, z02))))


def _check_option_line(path: Path, number: int, line: str) -> None:
    tokens = line[1:].lower().split()
    k = 0
    while k < len(tokens):
        token = tokens[k]
        if token == "r":
            if k + 1 >= len(tokens) or not _is_number(tokens[k + 1]) or float(tokens[k + 1]) <= 0:
                raise InputError(f"{path}: row {number}: option line {line!r} has no positive reference "
                                 f"after 'R'; {_OPTION_HELP}")
            k += 2
            continue
        if token not in _UNITS and token not in _FORMATS and token not in _PARAMETERS:
            raise InputError(f"{path}: row {number}: option line {line!r}: unknown field {token!r}; "
                             f"{_OPTION_HELP}")
        k += 1
    parameter = next((t for t in tokens if t in _PARAMETERS), "s")
    if parameter not in ("s", "y", "z"):
        raise InputError(f"{path}: row {number}: the file holds {parameter.upper()} parameters; fitz_tool "
                         f"reads S-, Z- and Y-parameter Touchstone files (export one of those)")


def _is_number(token: str) -> bool:
    try:
        float(token)
    except ValueError:
        return False
    return True


def _check_layout(path: Path, text: str, nports: int) -> None:
    """Check option line, numbers and values per row of a Touchstone 1.x file (row and column named).

    A 2-port row may be wrapped over several lines (the standard allows it): numbers are collected until a
    row is complete. A 5-value row after the data, at a frequency not above the last one, starts the noise
    parameters (2-port files only).
    """
    expected = 1 + 2 * nports * nports
    option_seen = False
    rows = 0
    pending: list[str] = []
    start = end = 0
    last_frequency = -math.inf
    lines = text.splitlines()
    for number, raw in enumerate(lines, 1):
        line = raw.split("!", 1)[0].strip()
        if not line:
            continue
        if line.startswith("["):  # Touchstone 2 keywords: scikit-rf checks that layout
            return
        if line.startswith("#"):
            if not option_seen:
                _check_option_line(path, number, line)
            option_seen = True
            continue
        if not option_seen:
            raise InputError(f"{path}: row {number}: data before the option line; add one first, "
                             f"{_OPTION_HELP}")
        tokens = line.split()
        for column, token in enumerate(tokens, 1):
            if not _is_number(token) or not math.isfinite(float(token)):
                raise InputError(f"{path}: row {number}, column {column}: {token!r} is not a finite number")
        if pending and len(tokens) % 2:  # a continuation holds value pairs only: the row above is short
            _row_error(path, lines, start, end, len(pending), nports)
        if not pending:
            noise_row = (nports == 2 and len(tokens) == 5 and rows > 0
                         and float(tokens[0]) <= last_frequency)
            if noise_row:
                return
            start = number
        pending += tokens
        end = number
        if nports == 2 and len(pending) < expected and len(pending) % 2:
            continue  # a wrapped 2-port row (frequency and pairs, then pairs) goes on on the next line
        if len(pending) != expected:
            _row_error(path, lines, start, number, len(pending), nports)
        last_frequency = float(pending[0])
        pending = []
        rows += 1
    if pending:
        _row_error(path, lines, start, end, len(pending), nports)
    if not option_seen:
        raise InputError(f"{path}: no option line; {_OPTION_HELP}")
    if rows == 0:
        raise InputError(f"{path}: no data rows after the option line")


def _row_error(path: Path, lines: list[str], start: int, number: int, count: int, nports: int) -> None:
    """Raise the error for a row of ``count`` values on lines ``start``..``number`` (1-based)."""
    expected = 1 + 2 * nports * nports
    other = {3: 1, 9: 2}
    last = not any(r.split("!", 1)[0].strip() for r in lines[number:])
    hint = (" (the file looks truncated)" if last and count < expected else
            f" (this looks like a {other[count]}-port file: check the extension)" if count in other else "")
    where = f"row {start} has" if start == number else f"rows {start}-{number} have"
    raise InputError(f"{path}: {where} {count} values; a {nports}-port file needs {expected} per row "
                     f"(frequency and {nports * nports} complex parameter{'s' if nports > 1 else ''}){hint}")


def _load(path: Path) -> tuple[skrf.Network, Touchstone, list[str], str]:
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: cannot read the file ({exc.strerror or exc})") from None
    match = re.fullmatch(r"\.s(\d+)p", path.suffix.lower())
    if not match or match.group(1) not in ("1", "2"):
        raise InputError(f"{path}: expected a .s1p or .s2p Touchstone file")
    nports = int(match.group(1))
    _check_layout(path, data.decode("latin-1"), nports)
    text, checked = checked_touchstone_text(path, data.decode("latin-1"), nports)  # comments stripped
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            touchstone = Touchstone(named_text(text, path))
            network = skrf.Network(named_text(text, path))
        except (ValueError, TypeError, IndexError, KeyError, EOFError, UnicodeError, AttributeError) as exc:
            detail = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
            raise InputError(f"{path}: scikit-rf cannot read it as Touchstone: {detail}") from None
    notes = sorted({str(w.message).strip().splitlines()[0] for w in caught})
    if network.nports != nports:
        raise InputError(f"{path}: holds {network.nports}-port data but the extension says {nports}-port")
    if network.frequency.npoints == 0:
        raise InputError(f"{path}: no data rows after the option line")
    notes = checked + [f"scikit-rf: {n}" for n in notes]
    return network, touchstone, notes, hashlib.sha256(data).hexdigest()


def _reference(path: Path, network: skrf.Network) -> np.ndarray:
    z0 = np.asarray(network.z0, dtype=complex)
    if np.any(np.abs(z0.imag) > 1e-12 * np.abs(z0)) or np.any(z0.real <= 0):
        raise InputError(f"{path}: reference impedance must be real and positive (got {z0.ravel()[0]:g} ohm)")
    return z0.real


def _describe_reference(z0: np.ndarray) -> str:
    per_port = [np.unique(z0[:, k]) for k in range(z0.shape[1])]
    if any(p.size > 1 for p in per_port):
        return "frequency-dependent (from the file)"
    values = [float(p[0]) for p in per_port]
    if len(set(values)) == 1:
        return f"{values[0]:g} ohm"
    return ", ".join(f"port {k + 1}: {v:g} ohm" for k, v in enumerate(values))


@dataclass(frozen=True)
class NetworkFile:
    """A Touchstone file read with scikit-rf, checked, with what reading it involved.

    Attributes
    ----------
    path : Path
        The file.
    network : skrf.Network
        Its data as S-parameters (frequency in Hz); Z- and Y-parameter files are converted.
    z0 : ndarray of float
        Real, positive reference impedance in ohm, shape (points, ports).
    version, frequency_unit, data_format, parameter : str
        Touchstone version, frequency unit and number format as in the file, parameter letter (s, z, y).
    sha256 : str
        SHA-256 of the file's bytes.
    steps, notes : tuple of str
        Conversions made while reading; scikit-rf's warnings.
    """

    path: Path
    network: skrf.Network
    z0: np.ndarray
    version: str
    frequency_unit: str
    data_format: str
    parameter: str
    sha256: str
    steps: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()

    @property
    def reference(self) -> str:
        """The reference impedance in words (``"50 ohm"``, per port, or frequency-dependent)."""
        return _describe_reference(self.z0)


def read_network(path: str | Path) -> NetworkFile:
    """Read and check a ``.s1p`` or ``.s2p`` file (S, Z or Y parameters) with scikit-rf.

    Touchstone 1.x stores Z and Y normalized to the reference R (z = Z / R, y = Y R; Touchstone 1.1
    specification, from memory). scikit-rf 2.2 multiplies both by R before converting to S, which is right
    for Z and wrong for Y; Y files are corrected here (Y = y / R) and the step recorded.

    Raises
    ------
    InputError
        Unreadable or malformed file (row and column named), wrong port count, complex reference.
    """
    path = Path(path)
    network, touchstone, notes, sha256 = _load(path)
    z0 = _reference(path, network)
    parameter = str(touchstone.parameter).lower()
    version = str(touchstone.version)
    steps: list[str] = []
    if parameter in ("z", "y"):
        letter = parameter.upper()
        if parameter == "y" and version.startswith("1"):
            y = skrf.network.s2y(network.s, network.z0) / (z0**2)[:, :, None]
            network = network.copy()
            network.s = skrf.network.y2s(y, network.z0)
        steps.append(f"{letter} parameters converted to S with scikit-rf "
                     + ("(Touchstone 1.x values normalized to R: Z = z R)" if parameter == "z" and
                        version.startswith("1") else
                        "(Touchstone 1.x values normalized to 1/R: Y = y / R)" if version.startswith("1")
                        else "(values in ohm and siemens)"))
    return NetworkFile(path=path, network=network, z0=z0, version=version,
                       frequency_unit=str(touchstone.frequency_unit), data_format=str(touchstone.format),
                       parameter=parameter, sha256=sha256, steps=tuple(steps), notes=tuple(notes))


def read_touchstone(path: str | Path, options=None) -> Measurement:
    """Read a ``.s1p`` (reflection) or ``.s2p`` (shunt- or series-through) file into a Measurement.

    Parameters
    ----------
    path : str or Path
        Touchstone 1.x or 2.x file. The reference impedance (ohm, per port) comes from the file.
    options : ReadOptions or None
        Only ``options.through`` is used: ``"shunt"`` or ``"series"`` for ``.s2p`` files (required there).

    Returns
    -------
    Measurement
        Frequency in Hz, impedance in ohm, relative sigmas from the conversion (see the module docstring).

    Raises
    ------
    InputError
        Unreadable or malformed file (row and column named), wrong port count, missing ``through`` for a
        ``.s2p`` file, complex reference, or no usable point left.
    """
    path = Path(path)
    through = getattr(options, "through", None)
    read = read_network(path)
    network, z0 = read.network, read.z0
    frequency = np.asarray(network.f, dtype=float)
    warnings_: list[str] = list(read.notes)
    if network.nports == 1:
        form, field, s = "touchstone_s11", "S11", network.s[:, 0, 0]
        z01 = z02 = z0[:, 0]
        impedance = s11_to_z(s, z01)
        if through:
            warnings_.append(f"--through {through} ignored: {path.name} is a one-port reflection file")
    else:
        if through not in ("shunt", "series"):
            raise InputError(f"{path}: a .s2p file needs to know how the part was connected: pass --through "
                             f"shunt (part to ground across the line) or --through series (part in the line)")
        form, field, s = f"touchstone_s21_{through}", "S21", network.s[:, 1, 0]
        z01, z02 = z0[:, 0], z0[:, 1]
        convert = s21_shunt_to_z if through == "shunt" else s21_series_to_z
        impedance = convert(s, z01, z02)
    sensitivity = lnz_sensitivity(form, s, z01, z02)

    steps = [f"read {len(frequency)} points from Touchstone {read.version} with scikit-rf, "
             f"reference {read.reference}", *read.steps,
             f"converted {field} to impedance: {_FORMULAS[form]}"]
    positive = frequency > 0
    usable = positive & np.isfinite(impedance) & (impedance != 0) & np.isfinite(sensitivity) & (
        sensitivity <= MAX_SENSITIVITY)
    if np.any(~positive):
        warnings_.append(f"dropped {int(np.sum(~positive))} point(s) at 0 Hz")
    singular = int(np.sum(positive & ~usable))
    if singular:
        warnings_.append(f"dropped {singular} point(s) where {field} makes the conversion singular "
                         f"(|d ln Z/d{field}| > {MAX_SENSITIVITY:g}: Z -> 0 or infinity)")
    if not np.any(usable):
        ideal = {-1: "a short circuit (S11 = -1, Z = 0)", 1: "an open circuit (S11 = +1, Z infinite)"}
        for value, what in ideal.items():
            if network.nports == 1 and np.all(np.abs(s - value) < 1e-3):
                raise InputError(f"{path}: no usable point: the file is {what} at every point, a standard,"
                                 f" not a part with an impedance to fit")
        raise InputError(f"{path}: no usable point: every {field} value makes the conversion singular "
                         f"(check --through and that the part was connected)")
    if not np.all(usable):
        steps.append(f"kept {int(usable.sum())} of {len(frequency)} points")
    steps.append(f"sigma of ln|Z| and phase = |d ln Z/d{field}| per point (equal additive noise in {field}, "
                 f"unknown scale)")
    active = int(np.sum(np.abs(s) > 1.01))  # beyond noise: a passive part has |S| <= 1
    if active:
        warnings_.append(f"{active} point(s) have |{field}| > 1.01 (not passive): check the calibration")
    unit, fmt = read.frequency_unit, read.data_format
    provenance = Provenance(
        source=str(path),
        sha256=read.sha256,
        form=form,
        columns={"frequency": "frequency", "S": field, "reference": _describe_reference(z0)},
        units={"frequency": _UNITS.get(unit.lower(), unit), "S": _FORMATS.get(fmt.lower(), fmt)},
        steps=tuple(steps),
        warnings=tuple(warnings_),
    )
    g = sensitivity[usable]
    level = np.abs(s[usable])
    terms = ((NoiseTerm("s_relative", (g * level) ** 2, False, "%", f"of |{field}|"),) if np.all(level > 0)
             else ()) + (NoiseTerm("s_floor", g**2, False, "", f"in {field}", default=True),)
    return Measurement(frequency[usable], impedance[usable], sigma_lnmag=g, sigma_phase=g,
                       sigma_absolute=False, provenance=provenance, noise_terms=terms)
