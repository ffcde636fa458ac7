"""A drive response in text, JSON, figures and an HTML section.

The JSON keeps SI units: ``{"voltage": {"peak_to_peak", "peak", "rms", "rms_ac", "dc"}, "current": {...},
"power": {"average_w", "stderr_w"}, "harmonics": [...], "extrapolated_share": float, ...}``, where each
voltage and current entry is ``{"value", "stderr"}`` (stderr null when it could not be propagated, 0 for the
quantity the drive sets) and ``u_combined`` with the stated bench limits added (null without them).
"""

from __future__ import annotations

import math
from html import escape

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import EngFormatter

from ..drive.response import SAFETY_NOTE, DriveResult, Quantity, percent
from ..units import format_quantity, format_relative
from .plots import PALETTE

__all__ = ["format_drive_report", "drive_to_json", "drive_figures", "drive_html_section",
           "DRIVE_FIGURE_CAPTIONS", "TERMINAL_HARMONICS"]

#: Harmonic rows shown in the terminal (all are in the JSON).
TERMINAL_HARMONICS = 12
_LABELS = (("peak_to_peak", "peak-to-peak"), ("peak", "peak (largest magnitude)"), ("rms", "RMS (total)"),
           ("rms_ac", "RMS (AC part)"), ("dc", "DC (mean)"))
DRIVE_FIGURE_CAPTIONS: dict[str, str] = {
    "drive_waves": "Current through and voltage across the part over one period of the drive.",
    "drive_loss": "Average loss per harmonic (bars) and the fitted band (shaded); harmonics outside it use "
                  "the model extrapolated.",
}


def _q(q: Quantity, combined: bool = True) -> str:
    if q.stderr == 0.0 and q.note:
        return f"{format_quantity(q.value, q.unit)}  ({q.note})"
    if q.value == 0 or not math.isfinite(q.value):
        return format_quantity(q.value, q.unit)
    text = format_quantity(q.value, q.unit, q.stderr)
    if combined and q.u_combined is not None and q.stderr is not None:
        text += f"  (with stated limits +/- {format_relative(q.u_combined, q.value)})"
    return text


def _rows(result: DriveResult) -> list[str]:
    lines = []
    for section in ("current", "voltage"):
        values = getattr(result, section)
        lines.append(f"  {section}:")
        lines += [f"    {label:<26} {_q(values[key])}" for key, label in _LABELS]
    return lines


def format_drive_report(result: DriveResult) -> str:
    """Terminal text: drive, model, voltage and current figures, loss, harmonics, notes and safety."""
    w = result.waveform
    band = result.model.band
    lines = [f"Drive: {w.quantity} {w.source}",
             f"  period {format_quantity(w.period, 's')} "
             f"(fundamental {format_quantity(1 / w.period, 'Hz')}), "
             f"{w.periods} period(s), {w.samples.size} samples",
             *[f"  - {step}" for step in w.steps],
             f"Part model: {result.model.circuit.expression}  (from {result.model.source})",
             "  fitted band: " + (f"{format_quantity(band[0], 'Hz')} to {format_quantity(band[1], 'Hz')}"
                                  if band else "not recorded"),
             "  DC resistance: " + ("none (no DC path)" if math.isinf(result.dc_resistance)
                                    else format_quantity(result.dc_resistance, "ohm")),
             "", "Response:", *_rows(result),
             "", f"Average loss in the part: {_q(result.power)}",
             f"Share from outside the fitted band (model extrapolated): {percent(result.extrapolated_share)}",
             "", "Harmonics (peak amplitudes):"]
    rows = [(str(h.order), format_quantity(h.frequency, "Hz"), _q(h.current_amplitude, False).split("  (")[0],
             _q(h.voltage_amplitude, False).split("  (")[0], _q(h.loss, False),
             "" if h.in_band else "extrapolated")
            for h in result.harmonics[:TERMINAL_HARMONICS]]
    header = ("n", "frequency", "current", "voltage", "loss", "")
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    lines.append("  " + "  ".join(f"{h:<{wd}}" for h, wd in zip(header, widths, strict=True)).rstrip())
    lines += ["  " + "  ".join(f"{c:<{wd}}" for c, wd in zip(r, widths, strict=True)).rstrip() for r in rows]
    if len(result.harmonics) > TERMINAL_HARMONICS:
        lines.append(f"  ... {len(result.harmonics) - TERMINAL_HARMONICS} more harmonic(s) in the JSON")
    notes = (*result.notes, f"uncertainties: {result.uncertainty_note}")
    lines += ["", "Notes:"] + [f"  - {n}" for n in notes]
    lines += ["", f"Safety: {SAFETY_NOTE}"]
    return "\n".join(lines) + "\n"


def _num(value) -> float | None:
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _entry(q: Quantity) -> dict:
    return {"value": _num(q.value), "stderr": _num(q.stderr), "u_combined": _num(q.u_combined)}


def drive_to_json(result: DriveResult) -> dict:
    """The machine record of a drive response (SI, JSON-safe: null for NaN and infinity)."""
    w = result.waveform
    return {
        "drive": {"quantity": w.quantity, "source": w.source, "period_s": _num(w.period),
                  "periods": int(w.periods), "samples": int(w.samples.size), "steps": list(w.steps)},
        "model": {"expression": result.model.circuit.expression, "source": result.model.source,
                  "band_hz": None if result.model.band is None else [_num(b) for b in result.model.band],
                  "dc_resistance_ohm": _num(result.dc_resistance)},
        "voltage": {k: _entry(v) for k, v in result.voltage.items()},
        "current": {k: _entry(v) for k, v in result.current.items()},
        "power": {"average_w": _num(result.power.value), "stderr_w": _num(result.power.stderr),
                  "u_combined_w": _num(result.power.u_combined)},
        "harmonics": [{"order": h.order, "frequency_hz": _num(h.frequency),
                       "current_a": _entry(h.current_amplitude), "voltage_v": _entry(h.voltage_amplitude),
                       "current_phase_deg": _num(np.degrees(np.angle(h.current))),
                       "voltage_phase_deg": _num(np.degrees(np.angle(h.voltage))),
                       "loss_w": _entry(h.loss), "in_band": h.in_band} for h in result.harmonics],
        "extrapolated_share": _num(result.extrapolated_share),
        "shares_outside_band": {k: _num(v) for k, v in result.shares.items()},
        "notes": list(result.notes),
        "uncertainty_note": result.uncertainty_note,
        "safety": SAFETY_NOTE,
    }


def _figure(width: float, height: float) -> Figure:
    figure = Figure(figsize=(width, height), layout="constrained")
    FigureCanvasAgg(figure)
    return figure


def drive_figures(result: DriveResult) -> dict[str, Figure]:
    """``drive_waves`` (current and voltage over one period) and ``drive_loss`` (loss per harmonic)."""
    waves = _figure(7.0, 5.0)
    ax_i, ax_v = waves.subplots(2, 1, sharex=True)
    t = result.time
    ax_i.plot(t, result.current_wave, color=PALETTE["measured"], linewidth=1.0)
    ax_v.plot(t, result.voltage_wave, color=PALETTE["model"], linewidth=1.0)
    ax_i.set_ylabel("current")
    ax_v.set_ylabel("voltage")
    ax_v.set_xlabel("time")
    for ax, unit in ((ax_i, "A"), (ax_v, "V")):
        ax.grid(True, color=PALETTE["grid"], linewidth=0.6)
        ax.yaxis.set_major_formatter(EngFormatter(unit=unit, sep=" "))
    ax_v.xaxis.set_major_formatter(EngFormatter(unit="s", sep=" "))
    ax_i.set_title(f"{result.model.circuit.expression} under {result.waveform.source}"[:90])
    loss = _figure(7.0, 3.6)
    ax = loss.subplots()
    f = np.array([h.frequency for h in result.harmonics])
    p = np.array([h.loss.value for h in result.harmonics])
    positive = p > 1e-9 * max(p.max(initial=0.0), 0.0)  # below that, numerical images only
    if positive.any():
        ax.vlines(f[positive], p[positive].min() * 0.3, p[positive], color=PALETTE["model"], linewidth=2.0)
        ax.set_yscale("log")
        ax.set_xscale("log")
    band = result.model.band
    if band is not None:
        ax.axvspan(band[0], band[1], color=PALETTE["noise"], alpha=0.15, label="fitted band")
        ax.legend(loc="best")
        if positive.any():
            ax.set_xlim(min(f[positive].min(), band[1]) / 2, max(f[positive].max(), band[0]) * 2)
    ax.grid(True, color=PALETTE["grid"], linewidth=0.6)
    ax.xaxis.set_major_formatter(EngFormatter(unit="Hz", sep=" "))
    ax.yaxis.set_major_formatter(EngFormatter(unit="W", sep=" "))
    ax.set_xlabel("harmonic frequency")
    ax.set_ylabel("average loss")
    ax.set_title(f"Loss per harmonic (total {format_quantity(result.power.value, 'W')})")
    return {"drive_waves": waves, "drive_loss": loss}


def drive_html_section(result: DriveResult) -> str:
    """An HTML fragment (escaped) with the figures of :func:`format_drive_report`, for a report page."""
    text = escape(format_drive_report(result))
    return f"<pre>{text}</pre>"
