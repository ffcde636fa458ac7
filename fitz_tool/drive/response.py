"""The part under a periodic drive: harmonics of the drive times the model impedance, back to time.

Method (time dependence e^{+jwt}; common practice, no source). The drive record (whole periods, the
piecewise-linear curve through its samples) is resampled on a fine grid of at least ``FINE_SAMPLES`` points by
linear interpolation, which keeps it exactly, and its FFT gives the phasors c_k at f_k = k / record length.
The response of a current drive is V_k = Z(f_k) I_k (of a voltage drive I_k = V_k / Z(f_k)); the DC term goes
through the model's DC resistance (a DC current into a part with no DC path is refused; zero DC through it
gives no DC voltage term, since the part's DC voltage is then set by its history, not by the drive).

Back in time, the response is split as y = a x + b dx/dt + h * x, where a + j w b is the transfer
function's high-frequency limit (a series resistance and inductance for Z, a conductance and capacitance
for 1 / Z) applied exactly to the piecewise-linear drive in the time domain, and the remainder h, which
falls off with frequency, is summed from the FFT. So the jump an ESL puts on the voltage at each corner of
a triangle current is a true step, not a ringing partial sum, and peak-to-peak values match a circuit
simulator's transient run.

Average power is P = sum_k 1/2 Re(V_k conj(I_k)) + V_dc I_dc (GUIDE, common practice). Components outside
the fitted band use the model extrapolated; their shares of the drive's and the response's AC mean square
and of the power are reported, and a drive with more than ``EXTRAPOLATION_LIMIT`` of its AC mean square
outside the band is refused unless ``allow_extrapolation``. Uncertainties are first order,
var(q) = J C J^T with J = dq/dp by central differences over the parameters the fit's covariance covers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..exceptions import InputError
from ..units import format_quantity
from .model import DriveModel, dc_resistance
from .waveform import QUANTITY_UNITS, Waveform

__all__ = ["Quantity", "Harmonic", "DriveResult", "drive_response", "FINE_SAMPLES", "EXTRAPOLATION_LIMIT",
           "DC_ZERO_FRACTION", "SAFETY_NOTE"]

FINE_SAMPLES = 1 << 16
#: Largest share of the drive's AC mean square allowed outside the fitted band without allow_extrapolation.
EXTRAPOLATION_LIMIT = 0.5
#: A DC level below this fraction of the drive's AC RMS is taken as zero where the part has no DC path.
DC_ZERO_FRACTION = 1e-3
#: Harmonics kept in the result table (those with content, lowest first).
MAX_HARMONICS = 100
SAFETY_NOTE = ("Loss and ripple figures are for the part alone at the conditions it was measured in; "
               "temperature, DC bias and ageing change ESR, capacitance and inductance. Check them against "
               "the part's ratings (ripple current, power, voltage) with the derating rules that apply, and "
               "defer to local practice and codes.")


@dataclass(frozen=True)
class Quantity:
    """One result in SI with its propagated standard uncertainty (None: ``note`` says why).

    ``u_combined`` is the standard uncertainty with the stated bench limits (uncertainty budget) added;
    None when no limits were stated.
    """

    value: float
    stderr: float | None
    unit: str
    note: str = ""
    u_combined: float | None = None


@dataclass(frozen=True)
class Harmonic:
    """One harmonic n of the drive's fundamental: phasors (peak) of current and voltage, and its loss (W)."""

    order: int
    frequency: float
    current: complex
    voltage: complex
    current_amplitude: Quantity
    voltage_amplitude: Quantity
    loss: Quantity
    in_band: bool


@dataclass(frozen=True)
class DriveResult:
    """Voltage, current and loss of the part under one periodic drive (all SI).

    ``voltage`` and ``current`` hold ``peak_to_peak``, ``peak`` (largest magnitude), ``rms``, ``rms_ac`` and
    ``dc``. ``shares`` are the fractions outside the fitted band of the drive's AC mean square (``drive``),
    the response's (``response``) and of the average power (``power``); ``extrapolated_share`` is the larger
    of the last two. ``time``, ``current_wave`` and ``voltage_wave`` are one period (the last of the record)
    on the fine grid.
    """

    drive: str
    waveform: Waveform
    model: DriveModel
    voltage: dict[str, Quantity]
    current: dict[str, Quantity]
    power: Quantity
    dc_resistance: float
    harmonics: tuple[Harmonic, ...]
    shares: dict[str, float]
    extrapolated_share: float
    notes: tuple[str, ...]
    uncertainty_note: str
    time: np.ndarray = field(repr=False)
    current_wave: np.ndarray = field(repr=False)
    voltage_wave: np.ndarray = field(repr=False)


@dataclass(frozen=True)
class _Setup:
    quantity: str
    x: np.ndarray  # drive on the fine grid, SI
    dt: float
    f: np.ndarray  # rfft bin frequencies, Hz
    c: np.ndarray  # two-sided coefficients of the drive (rfft / N)
    weight: np.ndarray  # 1 for DC and Nyquist, 2 elsewhere: mean square = sum weight |c|^2
    out_of_band: np.ndarray
    harmonic_bins: np.ndarray
    periods: int


def _setup(waveform: Waveform, band: tuple[float, float] | None) -> _Setup:
    x = np.asarray(waveform.samples, dtype=float)
    n = x.size
    factor = max(1, math.ceil(FINE_SAMPLES / n))
    if factor > 1:
        coarse = np.arange(n + 1)
        x = np.interp(np.arange(n * factor) / factor, coarse, np.append(x, x[0]))
    size = x.size
    dt = waveform.duration / size
    f = np.fft.rfftfreq(size, dt)
    c = np.fft.rfft(x) / size
    weight = np.full(f.size, 2.0)
    weight[0] = 1.0
    if size % 2 == 0:
        weight[-1] = 1.0
    out = np.zeros(f.size, bool) if band is None else (f < band[0] * (1 - 1e-9)) | (f > band[1] * (1 + 1e-9))
    out[0] = False
    level = weight[1:] * np.abs(c[1:]) ** 2
    bins = np.arange(waveform.periods, f.size, waveform.periods)
    content = bins[weight[bins] * np.abs(c[bins]) ** 2 > 1e-18 * max(level.max(initial=0.0), 1e-300)]
    return _Setup(waveform.quantity, x, dt, f, c, weight, out, content[:MAX_HARMONICS], waveform.periods)


def _segment_stats(left: np.ndarray, right: np.ndarray) -> tuple[float, float, float, float]:
    """(min, max, mean, mean square) of a periodic curve, linear between samples, with the value just
    before (``left``) and just after (``right``) each sample (they differ where the curve jumps)."""
    p, q = right, np.roll(left, -1)
    mean = float(np.mean((p + q) / 2))
    square = float(np.mean((p * p + p * q + q * q) / 3))
    both = np.concatenate([left, right])
    return float(both.min()), float(both.max()), mean, square


def _response(model: DriveModel, values: dict[str, float], s: _Setup, with_waves: bool = False):
    """Every result as a flat vector (and, on request, the response curve) for one set of parameter values."""
    z = model.impedance(s.f[1:], values)
    transfer = z if s.quantity == "current" else 1.0 / z
    r_dc = dc_resistance(model.circuit, values)
    x_dc = float(s.c[0].real)
    ac_rms = math.sqrt(float(np.sum(s.weight[1:] * np.abs(s.c[1:]) ** 2)))
    notes = []
    if s.quantity == "current":
        if math.isfinite(r_dc):
            y_dc = r_dc * x_dc
        elif abs(x_dc) <= DC_ZERO_FRACTION * ac_rms:
            y_dc = 0.0
            if abs(x_dc) > 1e-12 * ac_rms:
                notes.append(f"DC current of {x_dc:.3g} A ({abs(x_dc) / ac_rms:.2g} of the AC RMS) taken as "
                             "zero: the part has no DC path")
            notes.append("no DC path and no DC current: the DC voltage across the part is set by its history "
                         "(initial charge), not by the drive, and is shown as 0")
            x_dc = 0.0
        else:
            raise InputError(f"the drive has {x_dc:.4g} A DC but the model {model.circuit.expression!r} has "
                             "no DC path (it blocks DC); remove the DC part of the current (a record that "
                             "is not whole periods shows a false DC: give --period)")
    else:
        if r_dc == 0 and abs(x_dc) > DC_ZERO_FRACTION * ac_rms:
            raise InputError(f"the drive has {x_dc:.4g} V DC across a model with 0 ohm at DC "
                             f"({model.circuit.expression!r}): the DC current would be unbounded")
        y_dc = 0.0 if r_dc == 0 or math.isinf(r_dc) else x_dc / r_dc
        if r_dc == 0:
            notes.append("0 ohm at DC: the DC current is not set by the drive and is shown as 0")
    # high-frequency limit a + j w b of the transfer function
    f_big = s.f[-1] * 1e6
    t_big = complex((model.impedance(np.array([f_big]), values)[0]) ** (1 if s.quantity == "current" else -1))
    a, b = t_big.real, t_big.imag / (2 * np.pi * f_big)
    d = np.empty_like(s.c)
    d[0] = y_dc
    d[1:] = transfer * s.c[1:]
    h = np.empty_like(s.c)
    h[0] = y_dc - a * s.c[0].real
    h[1:] = d[1:] - (a + 2j * np.pi * s.f[1:] * b) * s.c[1:]
    rest = np.fft.irfft(h * s.x.size, n=s.x.size)
    slope_right = (np.roll(s.x, -1) - s.x) / s.dt
    slope_left = np.roll(slope_right, 1)
    y_left = a * s.x + b * slope_left + rest
    y_right = a * s.x + b * slope_right + rest
    y_stats = _segment_stats(y_left, y_right)
    x_stats = _segment_stats(s.x, s.x)
    x_stats = (x_stats[0], x_stats[1], x_dc if s.quantity == "current" else x_stats[2], x_stats[3])
    # phasors as current I and voltage V, power per bin
    i_c, v_c = (s.c, d) if s.quantity == "current" else (d, s.c)
    bin_power = s.weight * np.real(v_c * np.conj(i_c))
    bin_power[0] = float(i_c[0].real * v_c[0].real)
    power = float(np.sum(bin_power))
    ms_x = s.weight[1:] * np.abs(s.c[1:]) ** 2
    ms_y = s.weight[1:] * np.abs(d[1:]) ** 2
    out = s.out_of_band[1:]
    shares = [float(ms_x[out].sum() / ms_x.sum()) if ms_x.sum() > 0 else 0.0,
              float(ms_y[out].sum() / ms_y.sum()) if ms_y.sum() > 0 else 0.0,
              float(bin_power[1:][out].sum() / power) if power > 0 else math.nan]

    def summary(stats):
        low, high, mean, square = stats
        mean = 0.0 if abs(mean) <= 1e-12 * (high - low) else mean  # rounding of a zero-mean curve
        rms = math.sqrt(max(square, 0.0))
        return [high - low, max(abs(low), abs(high)), rms, math.sqrt(max(square - mean * mean, 0.0)), mean]

    y_summary = summary(y_stats)
    if s.quantity == "current":
        y_summary[4] = y_dc
    vector = np.array(summary(x_stats) + y_summary + [power]
                      + list(2 * np.abs(d[s.harmonic_bins])) + list(bin_power[s.harmonic_bins]))
    if not with_waves:
        return vector
    return vector, shares, r_dc, notes, d, (y_left + y_right) / 2


_KEYS = ("peak_to_peak", "peak", "rms", "rms_ac", "dc")


def percent(share: float) -> str:
    """A share as a percentage with two significant digits (``"0.12 %"``, ``"< 0.001 %"``)."""
    if math.isnan(share):
        return "undefined"
    if share < 1e-5:
        return "< 0.001 %" if share > 0 else "0 %"
    return f"{share * 100:.2g} %"


def _band_text(band: tuple[float, float]) -> str:
    return f"{format_quantity(band[0], 'Hz')} to {format_quantity(band[1], 'Hz')}"


def _variances(model: DriveModel, s: _Setup, base: np.ndarray) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Variances of every result from the fit's covariance, and with the stated limits (or None)."""
    if model.covariance is None or not model.names:
        return None, None
    sigma = np.sqrt(np.clip(np.diag(model.covariance), 0, None))
    jac = np.zeros((base.size, len(model.names)))
    for k, name in enumerate(model.names):
        step = 1e-3 * sigma[k] if sigma[k] > 0 else 1e-7 * max(abs(model.values[name]), 1e-30)
        up, down = dict(model.values), dict(model.values)
        up[name] += step
        down[name] -= step
        jac[:, k] = (_response(model, up, s) - _response(model, down, s)) / (2 * step)
    fit_var = np.einsum("ij,jk,ik->i", jac, model.covariance, jac)
    if model.budget_covariance is None:
        return fit_var, None
    return fit_var, np.einsum("ij,jk,ik->i", jac, model.budget_covariance, jac)


def drive_response(model: DriveModel, waveform: Waveform, allow_extrapolation: bool = False) -> DriveResult:
    """Voltage, current and loss of the model under a periodic drive, with propagated uncertainty.

    Parameters
    ----------
    model : DriveModel
        The fitted part (``model_from_fit`` or ``model_from_json``).
    waveform : Waveform
        Whole periods of the drive current (A) or voltage (V).
    allow_extrapolation : bool
        Accept a drive with most of its AC mean square outside the fitted band.

    Raises
    ------
    InputError
        DC current into a part with no DC path, DC voltage across a DC short, or a drive mostly outside the
        fitted band (unless allowed).
    """
    s = _setup(waveform, model.band)
    base, shares, r_dc, notes, d, wave = _response(model, model.values, s, with_waves=True)
    if model.band is None:
        notes.append("the fit record does not give its frequency band: extrapolation not assessed "
                     "(rerun 'fitz-tool fit --json' to record it)")
    elif shares[0] > EXTRAPOLATION_LIMIT and not allow_extrapolation:
        raise InputError(f"{percent(shares[0])} of the drive's AC mean square lies outside the fitted band "
                         f"({_band_text(model.band)}): the result would rest mostly on the model "
                         "extrapolated; measure over a wider band or pass --allow-extrapolation")
    elif shares[0] > 0 or max(shares[1], 0 if math.isnan(shares[2]) else shares[2]) > 0:
        notes.append(f"outside the fitted band ({_band_text(model.band)}) the model is extrapolated: "
                     f"{percent(shares[0])} of the drive's AC mean square, {percent(shares[1])} of the "
                     f"response's and {percent(shares[2])} of the power come from there")
    variance, combined = _variances(model, s, base)
    if combined is not None:
        notes.append("u_combined adds the stated bench limits (uncertainty budget, GUM) to the fit's "
                     "covariance: each input a systematic shift of all parameters together")
    unc_note = model.uncertainty_note or ("first-order propagation of the fit's covariance" if variance
                                          is not None else "no uncertainty: the model carries no covariance")

    def quantity(index: int, unit: str, exact: bool) -> Quantity:
        value = float(base[index])
        if exact:
            return Quantity(value, 0.0, unit, "set by the drive", None if combined is None else 0.0)
        if variance is None:
            return Quantity(value, None, unit, unc_note)
        u_c = None if combined is None else float(math.sqrt(max(combined[index], 0.0)))
        return Quantity(value, float(math.sqrt(max(variance[index], 0.0))), unit, "", u_c)

    drive_unit = QUANTITY_UNITS[waveform.quantity]
    other = "voltage" if waveform.quantity == "current" else "current"
    sections = {waveform.quantity: {k: quantity(i, drive_unit, True) for i, k in enumerate(_KEYS)},
                other: {k: quantity(5 + i, QUANTITY_UNITS[other], False) for i, k in enumerate(_KEYS)}}
    power = quantity(10, "W", False)
    harmonics = []
    n_h = s.harmonic_bins.size
    for j, k in enumerate(s.harmonic_bins):
        i_c, v_c = (s.c[k], d[k]) if waveform.quantity == "current" else (d[k], s.c[k])
        drive_amp = Quantity(float(2 * abs(s.c[k])), 0.0, drive_unit, "set by the drive",
                             None if combined is None else 0.0)
        resp_amp = quantity(11 + j, QUANTITY_UNITS[other], False)
        amps = (drive_amp, resp_amp) if waveform.quantity == "current" else (resp_amp, drive_amp)
        harmonics.append(Harmonic(int(k // s.periods), float(s.f[k]), complex(2 * i_c), complex(2 * v_c),
                                  amps[0], amps[1], quantity(11 + n_h + j, "W", False),
                                  not bool(s.out_of_band[k])))
    if r_dc > 0 and math.isfinite(r_dc) and abs(s.c[0].real) > 0 and model.band is not None:
        notes.append(f"the DC term uses the model's DC resistance {format_quantity(r_dc, 'ohm')}, "
                     "extrapolated to 0 Hz from the fitted band (lowest "
                     f"{format_quantity(model.band[0], 'Hz')})")
    last = slice(s.x.size - s.x.size // s.periods, s.x.size)
    time = np.arange(s.x.size // s.periods) * s.dt
    current_wave, voltage_wave = (s.x[last], wave[last]) if waveform.quantity == "current" \
        else (wave[last], s.x[last])
    finite = [v for v in shares[1:] if not math.isnan(v)]
    return DriveResult(
        drive=waveform.source, waveform=waveform, model=model, voltage=sections["voltage"],
        current=sections["current"], power=power, dc_resistance=r_dc, harmonics=tuple(harmonics),
        shares={"drive": shares[0], "response": shares[1], "power": shares[2]},
        extrapolated_share=max(finite) if finite else 0.0, notes=tuple(notes), uncertainty_note=unc_note,
        time=time, current_wave=current_wave, voltage_wave=voltage_wave)
