"""Built-in drive shapes from a short specification, e.g. ``'triangle:0.6App@500k+dc:2A'``.

Grammar (terms joined by ``+``; every term in the same unit, A for a current drive, V for a voltage)::

    SPEC      := TERM ( "+" TERM )*
    TERM      := "dc:" LEVEL | SHAPE ":" AMPLITUDE "@" FREQUENCY ( "," KEY "=" VALUE )*
    SHAPE     := sine | triangle | square | trapezoid
    AMPLITUDE := number [SI prefix] (A | V) [pp | pk | rms]      e.g. 0.6App, 2Apk, 1.2Arms, 500mVpp
    KEY       := duty (0..1 or %, default 0.5) | rise (s, trapezoid edges) | phase (deg, delay of the term)

Every AC term has zero mean; ``pk`` (the default) is half the peak-to-peak value, ``rms`` the term's own RMS.
Shapes over one period, u = t / T in [0, 1), before scaling to the amplitude:

- sine: sin(2 pi u)
- triangle: rises linearly from -1 to +1 over u < duty, falls back over the rest (duty 0.5: symmetric; a
  buck converter's inductor ripple has duty = V_out / V_in)
- square: high for u < duty, low after; the sample at each edge takes the mid value (the Fourier series'
  value at a jump), so the edges are one sample wide either side
- trapezoid: as square, with linear edges of ``rise`` seconds centred on the square's edges

The AC terms' frequencies must all be whole multiples of the lowest (the period is one over it). Each
period is sampled with ``SAMPLES_PER_PERIOD`` points; the record is the piecewise-linear curve through them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..exceptions import InputError
from ..units import parse_quantity, prefix_factor
from .waveform import Waveform

__all__ = ["DriveTerm", "parse_drive_spec", "drive_waveform", "SAMPLES_PER_PERIOD", "SHAPES"]

SAMPLES_PER_PERIOD = 16384
SHAPES = ("sine", "triangle", "square", "trapezoid")
_SPLIT = re.compile(r"\+(?=\s*(?:dc|sine|triangle|square|trapezoid)\s*:)", re.IGNORECASE)
_AMPLITUDE = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(meg|[fpnu\u00b5\u03bcmkKMG])?"
                        r"(A|V)\s*(pp|p-p|pk|peak|rms)?\s*$")
_CONVENTION = {"pp": "pp", "p-p": "pp", "pk": "pk", "peak": "pk", "rms": "rms", None: "pk"}


@dataclass(frozen=True)
class DriveTerm:
    """One term of a drive: ``shape`` ("dc" or one of ``SHAPES``), its size in SI and options.

    ``amplitude`` is the DC level for ``dc``, else the zero-mean term's size in the stated ``convention``
    (``"pp"``, ``"pk"`` = half the peak-to-peak, ``"rms"``); ``frequency`` in Hz (0 for dc), ``duty`` 0..1,
    ``rise`` in s, ``phase`` in degrees (a delay of phase / 360 periods).
    """

    shape: str
    amplitude: float
    unit: str
    convention: str = "pk"
    frequency: float = 0.0
    duty: float = 0.5
    rise: float = 0.0
    phase: float = 0.0


def _amplitude(text: str, spec: str) -> tuple[float, str, str]:
    match = _AMPLITUDE.match(text)
    if match is None:
        raise InputError(f"--drive {spec!r}: cannot read amplitude {text!r}; write e.g. 0.6App, 2Apk, "
                         "1.2Arms "
                         "or 500mVpp")
    number, prefix, unit, conv = match.groups()
    return float(number) * prefix_factor(prefix or ""), unit, _CONVENTION[conv.lower() if conv else None]


def _term(text: str, spec: str) -> DriveTerm:
    if ":" not in text:
        raise InputError(f"--drive {spec!r}: term {text!r} needs SHAPE:AMPLITUDE@FREQUENCY or dc:LEVEL")
    shape, rest = (part.strip() for part in text.split(":", 1))
    shape = shape.lower()
    if shape == "dc":
        level, unit, _ = _amplitude(rest, spec)
        return DriveTerm("dc", level, unit)
    if shape not in SHAPES:
        raise InputError(f"--drive {spec!r}: unknown shape {shape!r}; use dc, {', '.join(SHAPES)}")
    main, *options = (part.strip() for part in rest.split(","))
    if "@" not in main:
        raise InputError(f"--drive {spec!r}: term {text!r} needs AMPLITUDE@FREQUENCY, e.g. 0.6App@500k")
    amp_text, freq_text = main.split("@", 1)
    amplitude, unit, convention = _amplitude(amp_text, spec)
    if amplitude < 0:
        raise InputError(f"--drive {spec!r}: amplitude {amp_text!r} must not be negative (use phase=180)")
    frequency = parse_quantity(freq_text, "Hz", f"--drive frequency in {text!r}")
    if not frequency > 0:
        raise InputError(f"--drive {spec!r}: frequency {freq_text!r} must be positive")
    keys = {"duty": 0.5, "rise": 0.0, "phase": 0.0}
    for option in options:
        if "=" not in option:
            raise InputError(f"--drive {spec!r}: option {option!r} needs KEY=VALUE (duty, rise, phase)")
        key, value = (part.strip() for part in option.split("=", 1))
        key = key.lower()
        if key == "duty":
            keys["duty"] = (parse_quantity(value[:-1], "", "--drive duty") / 100 if value.endswith("%")
                            else parse_quantity(value, "", "--drive duty"))
        elif key == "rise" and shape == "trapezoid":
            keys["rise"] = parse_quantity(value, "s", "--drive rise")
        elif key == "phase":
            keys["phase"] = parse_quantity(value.removesuffix("deg"), "", "--drive phase")
        else:
            allowed = "duty, rise, phase" if shape == "trapezoid" else "duty, phase"
            raise InputError(f"--drive {spec!r}: option {key!r} not known for {shape}; use {allowed}")
    if shape in ("triangle", "square", "trapezoid") and not 0 < keys["duty"] < 1:
        raise InputError(f"--drive {spec!r}: duty must lie between 0 and 1 (or 0 % and 100 %)")
    if shape == "trapezoid":
        edge = keys["rise"] * frequency
        if not 0 < edge <= min(keys["duty"], 1 - keys["duty"]):
            raise InputError(f"--drive {spec!r}: trapezoid needs rise=SECONDS, positive and no longer "
                             "than the "
                             "high or low part of the period")
    return DriveTerm(shape, amplitude, unit, convention, frequency, keys["duty"], keys["rise"], keys["phase"])


def parse_drive_spec(spec: str) -> tuple[DriveTerm, ...]:
    """The terms of a drive specification (see the module docstring); raises InputError naming the term."""
    parts = [p.strip() for p in _SPLIT.split(spec) if p.strip()]
    if not parts:
        raise InputError("--drive: empty specification; e.g. 'triangle:0.6App@500k+dc:2A'")
    terms = tuple(_term(p, spec) for p in parts)
    units = {t.unit for t in terms}
    if len(units) > 1:
        raise InputError(f"--drive {spec!r}: mixes A and V; a drive is a current (A) or a voltage (V)")
    if all(t.shape == "dc" for t in terms):
        raise InputError(f"--drive {spec!r}: only DC; add a periodic term, e.g. sine:1A@100k")
    return terms


def _unit_shape(term: DriveTerm, u: np.ndarray) -> np.ndarray:
    """The zero-mean shape at period fractions ``u`` in [0, 1), peak-to-peak 2."""
    d = term.duty
    if term.shape == "sine":
        return np.sin(2 * np.pi * u)
    if term.shape == "triangle":
        return np.where(u < d, -1 + 2 * u / d, 1 - 2 * (u - d) / (1 - d))
    if term.shape == "square":
        y = np.where(u < d, 1.0, -1.0)
        step = 1.0 / u.size
        y[np.isclose(u, 0.0, atol=step * 1e-6) | np.isclose(u, d, atol=step * 1e-6)] = 0.0
        return y - (2 * d - 1)
    # trapezoid: edges of width e centred on u = 0 and u = d
    e = term.rise * term.frequency
    y = np.clip(np.minimum(u, d - u) / (e / 2), -1.0, 1.0)
    y = np.where(u > d + e / 2, np.clip((u - 1) / (e / 2), -1.0, 1.0), y)
    return y - (2 * d - 1)


def _scale(term: DriveTerm, shape: np.ndarray) -> float:
    if term.convention == "pp":
        return term.amplitude / 2
    if term.convention == "pk":
        return term.amplitude
    rms = float(np.sqrt(np.mean(shape**2)))
    return term.amplitude / rms


def drive_waveform(spec: str, samples_per_period: int = SAMPLES_PER_PERIOD) -> Waveform:
    """One period of the drive a specification describes (see the module docstring), as a Waveform."""
    terms = parse_drive_spec(spec)
    ac = [t for t in terms if t.shape != "dc"]
    f0 = min(t.frequency for t in ac)
    for t in ac:
        ratio = t.frequency / f0
        if abs(ratio - round(ratio)) > 1e-9 * ratio:
            raise InputError(f"--drive {spec!r}: {t.frequency:g} Hz is not a whole multiple of {f0:g} Hz; "
                             "the terms must share one period")
    n = int(samples_per_period)
    u = np.arange(n) / n
    total = np.zeros(n)
    for t in terms:
        if t.shape == "dc":
            total += t.amplitude
            continue
        cycles = int(round(t.frequency / f0))
        shape = _unit_shape(t, np.mod(u * cycles - t.phase / 360.0, 1.0))
        total += _scale(t, shape) * shape
    quantity = "current" if terms[0].unit == "A" else "voltage"
    described = "; ".join(_describe(t) for t in terms)
    return Waveform(quantity, total, 1.0 / f0, 1, spec,
                    (f"built-in drive: {described}; {n} samples per period",))


def _describe(t: DriveTerm) -> str:
    if t.shape == "dc":
        return f"DC {t.amplitude:g} {t.unit}"
    conv = {"pp": "peak-to-peak", "pk": "peak (half the peak-to-peak)", "rms": "rms"}[t.convention]
    extra = []
    if t.shape != "sine":
        extra.append(f"duty {t.duty:g}")
    if t.shape == "trapezoid":
        extra.append(f"edges {t.rise:g} s")
    if t.phase:
        extra.append(f"phase {t.phase:g} deg")
    details = f" ({', '.join(extra)})" if extra else ""
    return f"{t.shape} {t.amplitude:g} {t.unit} {conv} at {t.frequency:g} Hz{details}"
