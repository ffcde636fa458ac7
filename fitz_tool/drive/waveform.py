"""A periodic drive: one or more whole periods of a current or voltage, uniformly sampled, SI inside.

A record is read as the piecewise-linear curve through its samples (as a SPICE PWL source draws it) and
repeated periodically. ``read_waveform`` takes a delimited text export with a time column and a current or
voltage column (units from the header, e.g. ``Time (us)``, ``I(C1) [mA]``; a header with no unit is taken as
SI, as simulators write it, and that is recorded). The record is brought to whole periods, uniform:

- with ``period`` given, the last whole periods of the record are kept (the end of a record is closest to
  steady state) and resampled uniformly by linear interpolation;
- without it, the record is taken as whole periods: a uniform record ends one sample before the next
  period (a last sample equal to the first is taken as the start of the next period and dropped); a
  non-uniform record (a simulator's adaptive time steps) spans first to last time and is resampled.

The number of periods in the record is found from its spectrum (the largest divisor of the strongest bin
that leaves less than ``PERIOD_LEAKAGE`` of the AC mean square between the harmonics); give ``period`` to
state it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..exceptions import InputError
from ..units import format_quantity, prefix_factor

__all__ = ["Waveform", "read_waveform", "waveform_from_samples", "band_limited", "QUANTITY_UNITS",
           "PERIOD_LEAKAGE"]

#: SI unit of each drive quantity.
QUANTITY_UNITS: dict[str, str] = {"current": "A", "voltage": "V"}
#: Largest share of the AC mean square allowed between the harmonics of a detected period.
PERIOD_LEAKAGE = 1e-3
_UNIFORM = 1e-3  # relative spread of time steps still taken as uniform (printed times are rounded)
_TIME_NAMES = {"time", "t", "zeit", "temps", "tiempo", "x"}
_UNIT = re.compile(r"^(meg|[fpnu\u00b5\u03bcmkKMG])?(s|A|V)$")
_BRACKET = re.compile(r"[\(\[]\s*([^()\[\]]*?)\s*[\)\]]\s*$")


@dataclass(frozen=True)
class Waveform:
    """One or more whole periods of a drive, uniformly sampled.

    Attributes
    ----------
    quantity : str
        ``"current"`` (A) or ``"voltage"`` (V).
    samples : ndarray
        Values in A or V at ``t_k = k * period * periods / len(samples)``; the sample after the last is the
        first of the next period.
    period : float
        Period in s.
    periods : int
        Whole periods in ``samples``.
    source : str
        Where it came from (file name or drive specification).
    steps : tuple of str
        What was done to the record, in words.
    """

    quantity: str
    samples: np.ndarray
    period: float
    periods: int
    source: str
    steps: tuple[str, ...] = ()

    @property
    def unit(self) -> str:
        return QUANTITY_UNITS[self.quantity]

    @property
    def duration(self) -> float:
        """Length of the record in s (``periods * period``)."""
        return self.period * self.periods

    @property
    def time(self) -> np.ndarray:
        """Sample times in s, from 0."""
        return np.arange(self.samples.size) * (self.duration / self.samples.size)


def _periods_in(samples: np.ndarray) -> int:
    """Whole periods in a record of whole periods, from its spectrum (1 when nothing better is found)."""
    spectrum = np.abs(np.fft.rfft(samples - samples.mean())) ** 2
    spectrum[-1] *= 0.5 if samples.size % 2 == 0 else 1.0
    total = spectrum[1:].sum()
    if total <= 0:
        return 1
    strongest = int(np.argmax(spectrum[1:])) + 1
    for d in sorted((d for d in range(1, strongest + 1) if strongest % d == 0), reverse=True):
        off = np.ones(spectrum.size, bool)
        off[::d] = False
        if spectrum[off].sum() <= PERIOD_LEAKAGE * total:
            return d
    return 1


def waveform_from_samples(time: np.ndarray, values: np.ndarray, quantity: str, source: str,
                          period: float | None = None, steps: tuple[str, ...] = ()) -> Waveform:
    """Bring a sampled record (s, A or V) to whole periods, uniformly sampled (see the module docstring).

    Raises
    ------
    InputError
        Fewer than 8 samples, times not increasing, or a record shorter than one ``period``.
    """
    t = np.asarray(time, dtype=float)
    x = np.asarray(values, dtype=float)
    steps = list(steps)
    if t.size < 8:
        raise InputError(f"{source}: {t.size} samples; a drive record needs at least 8 (one or more whole "
                         "periods)")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(x))):
        raise InputError(f"{source}: the record has missing or non-numeric samples; remove those rows")
    dt = np.diff(t)
    if np.any(dt <= 0):
        k = int(np.flatnonzero(dt <= 0)[0])
        raise InputError(f"{source}: time does not increase at sample {k + 2} ({t[k + 1]:g} s after "
                         f"{t[k]:g} s); sort the record or remove the repeated times")
    step = float(np.median(dt))
    uniform = bool(np.max(np.abs(dt - step)) <= _UNIFORM * step)
    if period is not None:
        if not period > 0:
            raise InputError(f"{source}: --period must be positive")
        count = int(np.floor((t[-1] - t[0]) / period * (1 + 1e-9)))
        if count < 1:
            raise InputError(f"{source}: the record spans {t[-1] - t[0]:g} s, less than one period of "
                             f"{period:g} s; record a longer stretch or check --period")
        start = t[-1] - count * period
        n = int(round(count * period / step))
        grid = start + np.arange(n) * (count * period / n)
        x = np.interp(grid, t, x)
        steps.append(f"kept the last {count} whole period(s) of {format_quantity(period, 's')} and "
                     "resampled them uniformly "
                     f"to {n} samples (linear interpolation)")
        return Waveform(quantity, x, float(period), count, source, tuple(steps))
    if uniform:
        if abs(x[-1] - x[0]) <= 1e-9 * max(np.ptp(x), np.finfo(float).tiny):
            x = x[:-1]
            steps.append("last sample equals the first: taken as the start of the next period and dropped")
        span = x.size * step
        if np.max(np.abs(dt - step)) > 1e-9 * step:
            steps.append("time steps uniform to within the printed digits")
    else:
        span = t[-1] - t[0]
        n = t.size - 1
        grid = t[0] + np.arange(n) * (span / n)
        x = np.interp(grid, t, x)
        steps.append(f"time steps not uniform (from {dt.min():.3g} s to {dt.max():.3g} s): resampled to {n} "
                     "uniform samples over first to last time (linear interpolation)")
    count = _periods_in(x)
    steps.append(f"record taken as {count} whole period(s) of {format_quantity(span / count, 's')} "
                 "(found from its spectrum; "
                 "give --period to set it)")
    return Waveform(quantity, x, span / count, count, source, tuple(steps))


def _split_header(header: str) -> tuple[str, str | None]:
    """(name, unit text or None) from ``"Time (us)"``, ``"I(C1) [mA]"``, ``"time/s"``, ``"time"``."""
    text = header.strip()
    match = _BRACKET.search(text)
    if match and _UNIT.match(match.group(1).strip()):
        return text[:match.start()].strip(), match.group(1).strip()
    if "/" in text:
        name, unit = text.rsplit("/", 1)
        if _UNIT.match(unit.strip()):
            return name.strip(), unit.strip()
    parts = re.split(r"[\s_]+", text)
    if len(parts) > 1 and _UNIT.match(parts[-1]):
        return " ".join(parts[:-1]), parts[-1]
    return text, None


def _scale(unit: str | None, base: str, header: str, where: str) -> tuple[float, str]:
    if unit is None:
        return 1.0, f"{base} (no unit in the header: SI assumed)"
    match = _UNIT.match(unit)
    if match is None or match.group(2) != base:
        raise InputError(f"{where}: column {header!r} has unit {unit!r}, expected {base} with an optional "
                         f"SI prefix; fix the header or choose the column with --column")
    return prefix_factor(match.group(1) or ""), unit


def read_waveform(path: str | Path, quantity: str, period: float | None = None,
                  column: str | None = None) -> Waveform:
    """Read a drive record from delimited text: a time column and a current or voltage column.

    Parameters
    ----------
    path : path
        Delimited text (comma, semicolon, tab or spaces; preamble lines allowed).
    quantity : str
        ``"current"`` or ``"voltage"``: what the value column holds.
    period : float, optional
        Period in s when the record is not whole periods.
    column : str, optional
        Header (or ``#N``, 1-based) of the value column when the file has several.
    """
    from ..readers.delimited import decode_bytes, numeric_column, split_table

    where = str(path)
    if quantity not in QUANTITY_UNITS:
        raise InputError(f"drive quantity {quantity!r}: use current or voltage")
    try:
        raw = Path(path).read_bytes()
    except OSError as exc:
        raise InputError(f"{where}: cannot read ({exc.strerror})") from None
    text, encoding = decode_bytes(raw, where)
    table = split_table(text, encoding, where, headerless=True)
    if len(table.headers) < 2:
        raise InputError(f"{where}: needs a time column and a {quantity} column")
    split = [_split_header(h) for h in table.headers]
    base = QUANTITY_UNITS[quantity]
    time_index = next((k for k, (name, unit) in enumerate(split)
                       if (unit or "").endswith("s") or name.lower() in _TIME_NAMES), 0)
    if column is not None:
        names = [h.strip() for h in table.headers]
        if column.startswith("#") and column[1:].isdigit() and 1 <= int(column[1:]) <= len(names):
            value_index = int(column[1:]) - 1
        elif column.strip() in names:
            value_index = names.index(column.strip())
        else:
            raise InputError(f"{where}: no column {column!r}; columns are {', '.join(map(repr, names))}")
    else:
        candidates = [k for k, (_, unit) in enumerate(split) if k != time_index
                      and (unit is None or unit.endswith(base))]
        matching = [k for k in candidates if (split[k][1] or "").endswith(base)]
        others = [k for k in range(len(split)) if k != time_index]
        pick = matching or candidates or (others if len(others) == 1 else [])
        if len(pick) != 1:
            raise InputError(f"{where}: cannot tell which column holds the {quantity} among "
                             f"{', '.join(repr(table.headers[k]) for k in others)}; name it with --column "
                             "HEADER")
        value_index = pick[0]
    t_scale, t_unit = _scale(split[time_index][1], "s", table.headers[time_index], where)
    x_scale, x_unit = _scale(split[value_index][1], base, table.headers[value_index], where)
    t = numeric_column(table, time_index, where) * t_scale
    x = numeric_column(table, value_index, where) * x_scale
    steps = [*table.notes, f"time from column {table.headers[time_index]!r} [{t_unit}], {quantity} from "
             f"column {table.headers[value_index]!r} [{x_unit}]"]
    return waveform_from_samples(t, x, quantity, where, period, tuple(steps))


def band_limited(waveform: Waveform, bandwidth: float) -> Waveform:
    """The record through a Gaussian low-pass of -3 dB at ``bandwidth`` (Hz), as a scope's bandwidth limit.

    |H(f)| = exp(-ln(2) / 2 (f / bandwidth)^2), zero phase: no ringing and no delay (a Gaussian response is
    the usual model of an oscilloscope's roll-off; common practice, no source). Probe noise read piecewise
    linear has steep slopes, which an ESL turns into voltage spikes; the limit keeps the ripple and drops the
    noise. The share of the AC mean square removed is recorded.
    """
    if not bandwidth > 0:
        raise InputError(f"--bandwidth {bandwidth:g}: must be positive")
    n = waveform.samples.size
    c = np.fft.rfft(waveform.samples)
    f = np.fft.rfftfreq(n, waveform.duration / n)
    gain = np.exp(-np.log(2) / 2 * (f / bandwidth) ** 2)
    power = np.abs(c[1:]) ** 2
    removed = float(1 - np.sum(power * gain[1:] ** 2) / power.sum()) if power.sum() > 0 else 0.0
    step = (f"Gaussian bandwidth limit, -3 dB at {format_quantity(bandwidth, 'Hz')} (--bandwidth): "
            f"{removed * 100:.2g} % of the AC mean square removed")
    return Waveform(waveform.quantity, np.fft.irfft(c * gain, n=n), waveform.period, waveform.periods,
                    waveform.source, (*waveform.steps, step))
