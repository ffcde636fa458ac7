"""Input quantities of an uncertainty budget: the stated +/- limits of the bench, as GUM type B inputs.

Each input is a systematic offset common to every point of the sweep, hence ONE input quantity (GUM,
JCGM 100:2008, 5.2: fully correlated across points), with a rectangular distribution between its stated
limits, standard uncertainty ``u = a / sqrt(3)`` (GUM 4.3.7) and infinite degrees of freedom (GUM G.4.2).

Every input acts on the measurement through the log of Z (real part ln|Z|, imaginary part the phase in rad):
an input value ``t`` shifts ``ln Z`` at frequency f by ``t * shape(f)`` (phase-like inputs) or
``ln(1 + t * shape(f))`` (relative scale factors). Relations (common practice, no source):

- ``|Z|`` accuracy of the instrument (relative): ``|Z|`` reads ``(1 + e)`` too high, ``ln|Z| += ln(1 + e)``;
- phase accuracy (rad): the phase reads ``dphi`` too high;
- shunt, reference resistor or load standard value (relative): Z is proportional to each
  (``Z = V R_shunt / V_shunt``, ``Z = R_ref H``, ``Z = Z_std OS(Z_m) / OS(Z_l)``), so an error of the value
  scales Z by ``(1 + e)``;
- channel skew (s): an error ``e`` in the delay removed leaves a phase error ``-2 pi f e``.

Where the limits apply. They act on the impedance the fit sees, i.e. after every correction (skew, open/short,
load): state the accuracy of the corrected impedance, e.g. an analyzer's specification after its own
compensation. A common scale or phase factor passes through open/short compensation unchanged (it scales the
part and the standards alike), and with a load standard it cancels altogether, leaving the load's stated value
(``load_tolerance``) and the instrument's residual errors.

An accuracy table gives limits that vary with frequency; they are interpolated linearly in log frequency and
the offset is still one input quantity: ``t`` (a fraction in [-1, 1] of the local limit) is common to all
points, i.e. the error is taken as fully correlated across the sweep, the usual conservative reading of one
instrument's specification.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..exceptions import InputError
from ..units import format_quantity, format_to_resolution, parse_quantity

__all__ = ["AccuracyTable", "BudgetInputs", "Source", "read_accuracy_table"]

SQRT3 = math.sqrt(3.0)


@dataclass(frozen=True)
class AccuracyTable:
    """Accuracy limits over frequency.

    Attributes
    ----------
    frequency : ndarray
        Frequencies in Hz, strictly ascending.
    magnitude : ndarray
        +/- limit of |Z| relative to |Z| at each frequency (0.005 for 0.5 %).
    phase : ndarray
        +/- limit of the phase in rad at each frequency.
    source : str
        Where the table came from (file name), for messages.
    """

    frequency: np.ndarray
    magnitude: np.ndarray
    phase: np.ndarray
    source: str = ""

    def at(self, frequency: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(|Z| limit, phase limit in rad) at ``frequency`` (Hz), interpolated in log frequency.

        Raises InputError for frequencies outside the table (the limits there are not stated).
        """
        f = np.asarray(frequency, dtype=float)
        low, high = self.frequency[0], self.frequency[-1]
        if f.min() < low * (1 - 1e-9) or f.max() > high * (1 + 1e-9):
            raise InputError(f"accuracy table {self.source or ''}: covers {format_quantity(low, 'Hz')} to "
                             f"{format_quantity(high, 'Hz')} but the sweep runs from "
                             f"{format_quantity(f.min(), 'Hz')} to {format_quantity(f.max(), 'Hz')}; extend "
                             "the table or narrow the sweep with --band")
        lf, lt = np.log(f), np.log(self.frequency)
        return np.interp(lf, lt, self.magnitude), np.interp(lf, lt, self.phase)


def _cell(text: str, where: str, what: str, unit: str) -> float:
    text = text.strip()
    for suffix in ("%", "deg", "\u00b0"):
        if unit != "Hz" and text.lower().endswith(suffix):
            text = text[: -len(suffix)].strip()
    return parse_quantity(text, unit, f"{where} {what}")


def read_accuracy_table(path: str | Path) -> AccuracyTable:
    """Read an accuracy table: columns frequency (Hz, SI prefixes allowed), |Z| limit %, phase limit deg.

    Comma, semicolon or tab separated; an optional header line (any text) and ``#`` comment lines are skipped.
    At least two rows; frequencies strictly ascending; limits >= 0.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"accuracy table {path}: cannot read it ({exc})") from exc
    lines = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    try:
        dialect = csv.Sniffer().sniff("\n".join(lines[:5]), delimiters=",;\t")
        rows = list(csv.reader(lines, dialect))
    except csv.Error:
        rows = [line.replace(";", ",").replace("\t", ",").split(",") for line in lines]
    data = []
    for n, row in enumerate(rows, start=1):
        cells = [c for c in row if c.strip()]
        if n == 1 and cells and not any(ch.isdigit() for ch in cells[0]):
            continue  # header
        if len(cells) < 3:
            raise InputError(f"accuracy table {path}, row {n}: expected frequency, magnitude %, phase deg")
        where = f"accuracy table {path}, row {n},"
        data.append((_cell(cells[0], where, "frequency", "Hz"), _cell(cells[1], where, "magnitude %", ""),
                     _cell(cells[2], where, "phase deg", "")))
    if len(data) < 2:
        raise InputError(f"accuracy table {path}: needs at least two rows (frequency, magnitude %, "
                         "phase deg)")
    f, mag, ph = (np.array(col, dtype=float) for col in zip(*data, strict=True))
    if not np.all(f > 0) or not np.all(np.diff(f) > 0):
        raise InputError(f"accuracy table {path}: frequencies must be above 0 Hz and strictly ascending")
    if np.any(mag < 0) or np.any(ph < 0) or not np.all(np.isfinite(mag + ph)):
        raise InputError(f"accuracy table {path}: limits must be finite numbers >= 0")
    return AccuracyTable(f, mag / 100.0, np.radians(ph), str(path))


@dataclass(frozen=True)
class Source:
    """One input quantity of the budget.

    Attributes
    ----------
    key : str
        Stable identifier (``"magnitude_accuracy"``, ``"phase_accuracy"``, ``"shunt"``, ...), used in JSON.
    label : str
        In words, with its limit ("0.5 % |Z| accuracy").
    limit : float
        Stated +/- half-width ``a`` in the input's unit (1 for a table: the input is the fraction of it).
    unit : str
        Unit of the input (``""`` relative, ``"rad"``, ``"s"``).
    relative : bool
        True for a scale factor (ln Z shifts by ln(1 + t shape)), False for a phase-like input.
    shape_lnmag, shape_phase : ndarray
        Shift of ln|Z| and of the phase (rad) per unit of the input at each measured frequency.
    """

    key: str
    label: str
    limit: float
    unit: str
    relative: bool
    shape_lnmag: np.ndarray
    shape_phase: np.ndarray

    @property
    def standard_uncertainty(self) -> float:
        """u = a / sqrt(3), rectangular distribution (GUM 4.3.7)."""
        return self.limit / SQRT3

    def shift(self, t: float) -> np.ndarray:
        """Complex shift of ln Z at each frequency when the input takes the value ``t``."""
        if self.relative:
            return np.log1p(t * self.shape_lnmag) + 1j * t * self.shape_phase
        return t * (self.shape_lnmag + 1j * self.shape_phase)


def _fraction(value: float | None, option: str) -> float | None:
    if value is None:
        return None
    if not (math.isfinite(value) and value >= 0):
        raise InputError(f"{option} {value!r}: give a limit >= 0")
    return float(value)


@dataclass(frozen=True)
class BudgetInputs:
    """Stated +/- limits of the bench (all optional; SI and fractions).

    Attributes
    ----------
    magnitude_accuracy : float or None
        Limit of the measured |Z| relative to |Z| (0.005 for +/- 0.5 %).
    phase_accuracy : float or None
        Limit of the measured phase in rad.
    accuracy_table : AccuracyTable or None
        Limits over frequency (replaces the two above).
    shunt_tolerance, reference_tolerance, load_tolerance : float or None
        Relative tolerance of the shunt, the reference resistor and the load standard's stated value.
    skew_uncertainty : float or None
        Limit of the channel skew (s), whether or not a skew was removed.
    """

    magnitude_accuracy: float | None = None
    phase_accuracy: float | None = None
    accuracy_table: AccuracyTable | None = None
    shunt_tolerance: float | None = None
    reference_tolerance: float | None = None
    load_tolerance: float | None = None
    skew_uncertainty: float | None = None

    def __post_init__(self) -> None:
        for name in ("magnitude_accuracy", "phase_accuracy", "shunt_tolerance", "reference_tolerance",
                     "load_tolerance", "skew_uncertainty"):
            _fraction(getattr(self, name), name)
        if self.accuracy_table is not None and (self.magnitude_accuracy or self.phase_accuracy):
            raise InputError("give the accuracy either as one limit (--accuracy) or as a table "
                             "(--accuracy-table), not both")

    @property
    def is_empty(self) -> bool:
        """True when no limit is stated (the budget is then the noise alone)."""
        return not self.sources_for(np.array([1.0]))

    def sources_for(self, frequency: np.ndarray) -> list[Source]:
        """The input quantities with a non-zero limit, their shapes evaluated at ``frequency`` (Hz)."""
        f = np.asarray(frequency, dtype=float)
        one, zero = np.ones(f.shape), np.zeros(f.shape)
        out: list[Source] = []
        if self.magnitude_accuracy:
            out.append(Source("magnitude_accuracy", f"{self.magnitude_accuracy * 100:.3g} % |Z| accuracy",
                              self.magnitude_accuracy, "", True, one, zero))
        if self.phase_accuracy:
            out.append(Source("phase_accuracy", f"{math.degrees(self.phase_accuracy):.3g} deg phase accuracy",
                              self.phase_accuracy, "rad", False, zero, one))
        if self.accuracy_table is not None:
            mag, ph = self.accuracy_table.at(f)
            if np.any(mag > 0):
                out.append(Source("magnitude_accuracy", f"|Z| accuracy table ({mag.min() * 100:.3g} to "
                                  f"{mag.max() * 100:.3g} %)", 1.0, "", True, mag, zero))
            if np.any(ph > 0):
                out.append(Source("phase_accuracy", f"phase accuracy table ({math.degrees(ph.min()):.3g} to "
                                  f"{math.degrees(ph.max()):.3g} deg)", 1.0, "", False, zero, ph))
        for key, value, what in (("shunt", self.shunt_tolerance, "shunt tolerance"),
                                 ("reference", self.reference_tolerance, "reference resistor tolerance"),
                                 ("load", self.load_tolerance, "load standard tolerance")):
            if value:
                out.append(Source(key, f"{value * 100:.3g} % {what}", value, "", True, one, zero))
        if self.skew_uncertainty:
            skew = format_to_resolution(self.skew_uncertainty, "s", self.skew_uncertainty)
            out.append(Source("skew", f"{skew} channel skew",
                              self.skew_uncertainty, "s", False, zero, -2 * np.pi * f))
        return out
