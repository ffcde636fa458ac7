"""Figures of a measurement and of a fit: Bode view with residuals, Q over frequency, impedance plane.

Every function builds a fresh ``matplotlib.figure.Figure`` on its own Agg canvas (no display, no pyplot state
and no change to the session's backend), never changes its inputs and returns the Figure for the caller to
save or show. Colours are the Okabe-Ito
palette (Okabe & Ito, "Color Universal Design", 2008), safe for the common forms of colour-blindness.
Axes use matplotlib's ``EngFormatter`` so ticks read ``10 kHz``, ``1 kΩ``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import EngFormatter, NullFormatter

from ..measurement import Measurement
from ..results import FitResult

if TYPE_CHECKING:
    from ..derived import DesignValues

__all__ = ["PALETTE", "plot_measurement", "fit_figures"]

#: Okabe-Ito colours by role.
PALETTE: dict[str, str] = {
    "measured": "#0072B2",  # blue
    "model": "#D55E00",  # vermillion
    "noise": "#56B4E9",  # sky blue
    "resonance": "#009E73",  # bluish green
    "operating": "#CC79A7",  # reddish purple
    "ink": "#000000",
    "grid": "#BBBBBB",
}

_STYLE = {"font.size": 9, "axes.titlesize": 10, "axes.labelsize": 9, "legend.fontsize": 8}


def _figure(width: float, height: float) -> Figure:
    figure = Figure(figsize=(width, height), layout="constrained")
    FigureCanvasAgg(figure)
    return figure


def _style(ax, x_unit: str | None = "Hz", y_unit: str | None = None, log_x: bool = True) -> None:
    ax.grid(True, which="major", color=PALETTE["grid"], linewidth=0.6)
    ax.grid(True, which="minor", color=PALETTE["grid"], linewidth=0.3, alpha=0.5)
    ax.tick_params(labelsize=_STYLE["font.size"])
    if log_x:
        ax.set_xscale("log")
    if x_unit is not None:
        ax.xaxis.set_major_formatter(EngFormatter(unit=x_unit, sep=" "))
        ax.xaxis.set_minor_formatter(NullFormatter())
    if y_unit is not None:
        ax.yaxis.set_major_formatter(EngFormatter(unit=y_unit, sep=" "))
        if ax.get_yscale() == "log":
            ax.yaxis.set_minor_formatter(NullFormatter())


def _part_name(measurement: Measurement) -> str:
    from pathlib import Path

    source = measurement.provenance.source
    return Path(source).name if source else "part"


def plot_measurement(measurement: Measurement) -> Figure:
    """Bode view of a measurement: |Z| (log-log) over phase (degrees), sharing the frequency axis.

    Parameters
    ----------
    measurement : Measurement
        Frequency in Hz, impedance in ohm.

    Returns
    -------
    matplotlib.figure.Figure
        Two panels; error bars of +/- 1 sigma when the measurement carries per-point uncertainties.
    """
    f = measurement.frequency
    figure = _figure(7.0, 5.2)
    ax_mag, ax_phase = figure.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    ax_mag.set_yscale("log")
    mag_err = None if measurement.sigma_lnmag is None else measurement.magnitude * measurement.sigma_lnmag
    phase_err = None if measurement.sigma_phase is None else np.degrees(measurement.sigma_phase)
    marker = dict(color=PALETTE["measured"], marker="o", markersize=2.5, linewidth=0.8)
    ax_mag.errorbar(f, measurement.magnitude, yerr=mag_err, label="measured", **marker)
    ax_phase.errorbar(f, measurement.phase_deg, yerr=phase_err, **marker)
    ax_mag.set_ylabel("|Z|")
    ax_phase.set_ylabel("phase of Z (deg)")
    ax_phase.set_xlabel("frequency")
    ax_phase.axhline(0.0, color=PALETTE["ink"], linewidth=0.6)
    _style(ax_mag, x_unit=None, y_unit="Ω")
    _style(ax_phase, x_unit="Hz")
    ax_phase.set_ylim(-95, 95)
    ax_phase.set_yticks([-90, -45, 0, 45, 90])
    ax_mag.set_title(f"Measured impedance of {_part_name(measurement)} ({len(measurement)} points)")
    ax_mag.legend(loc="best")
    return figure


def _model_grid(result: FitResult, points: int = 5000) -> tuple[np.ndarray, np.ndarray]:
    f = result.measurement.frequency
    grid = np.geomspace(f[0], f[-1], points) if f[-1] > f[0] else f.copy()
    return grid, result.model_impedance(grid)


def _noise_levels(result: FitResult) -> tuple[np.ndarray, np.ndarray, str]:
    """One-sigma noise of the relative |Z| (fraction) and phase (rad) per point, and how it was found."""
    m = result.measurement
    residual = result.log_residuals()
    n = len(m)
    if m.sigma_lnmag is not None and m.sigma_phase is not None:
        if m.sigma_absolute:
            return m.sigma_lnmag, m.sigma_phase, "stated noise, +/- 1 sigma"
        scale = float(np.sqrt(max(result.reduced_chi_square, 0.0)))
        return m.sigma_lnmag * scale, m.sigma_phase * scale, "noise scaled to the residuals, +/- 1 sigma"
    rms_mag = float(np.sqrt(np.mean(residual.real**2)))
    rms_phase = float(np.sqrt(np.mean(residual.imag**2)))
    return np.full(n, rms_mag), np.full(n, rms_phase), "noise from residual RMS, +/- 1 sigma"


def _mark_frequencies(axes, design: DesignValues | None, f_low: float, f_high: float) -> None:
    if design is None:
        return
    for k, res in enumerate(r for r in design.resonances if f_low <= r.frequency.value <= f_high):
        for i, ax in enumerate(axes):
            label = "self-resonance" if i == 0 and k == 0 else None
            ax.axvline(res.frequency.value, color=PALETTE["resonance"], linestyle="--", linewidth=1.0,
                       label=label)
    for k, point in enumerate(p for p in design.points if f_low <= p.frequency <= f_high):
        for i, ax in enumerate(axes):
            label = "operating frequency" if i == 0 and k == 0 else None
            ax.axvline(point.frequency, color=PALETTE["operating"], linestyle=":", linewidth=1.2, label=label)


def _bode_figure(result: FitResult, design: DesignValues | None) -> Figure:
    m = result.measurement
    f = m.frequency
    grid, z_model = _model_grid(result)
    residual = result.log_residuals()
    sig_mag, sig_phase, noise_label = _noise_levels(result)
    figure = _figure(7.5, 8.0)
    ax_mag, ax_rmag, ax_phase, ax_rphase = figure.subplots(4, 1, sharex=True, height_ratios=[3, 1.3, 2, 1.3])
    dots = dict(color=PALETTE["measured"], marker="o", markersize=2.8, linestyle="none")
    line = dict(color=PALETTE["model"], linewidth=1.6)
    ax_mag.set_yscale("log")
    ax_mag.plot(f, m.magnitude, label="measured", **dots)
    ax_mag.plot(grid, np.abs(z_model), label="fitted model", **line)
    ax_phase.plot(f, m.phase_deg, **dots)
    ax_phase.plot(grid, np.degrees(np.angle(z_model)), **line)
    for ax, values, sigma, label in ((ax_rmag, 100 * residual.real, 100 * sig_mag, "|Z| residual (%)"),
                                     (ax_rphase, np.degrees(residual.imag), np.degrees(sig_phase),
                                      "phase residual (deg)")):
        ax.fill_between(f, -sigma, sigma, color=PALETTE["noise"], alpha=0.35, linewidth=0, label=noise_label)
        ax.axhline(0.0, color=PALETTE["ink"], linewidth=0.6)
        ax.plot(f, values, color=PALETTE["measured"], marker="o", markersize=2.2, linewidth=0.6)
        ax.set_ylabel(label)
    ax_mag.set_ylabel("|Z|")
    ax_phase.set_ylabel("phase of Z (deg)")
    ax_phase.axhline(0.0, color=PALETTE["ink"], linewidth=0.6)
    ax_phase.set_ylim(-95, 95)
    ax_phase.set_yticks([-90, -45, 0, 45, 90])
    ax_rphase.set_xlabel("frequency")
    _style(ax_mag, x_unit=None, y_unit="Ω")
    for ax in (ax_rmag, ax_phase):
        _style(ax, x_unit=None)
    _style(ax_rphase, x_unit="Hz")
    _mark_frequencies((ax_mag, ax_rmag, ax_phase, ax_rphase), design, f[0], f[-1])
    ax_mag.legend(loc="best")
    ax_rmag.legend(loc="lower left", fontsize=7, framealpha=0.85)
    ax_mag.set_title(f"{_part_name(m)}: measured and fitted  {result.circuit.expression}")
    return figure


def _q_of(z: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.abs(z.imag) / z.real
    return np.where((z.real > 0) & np.isfinite(q) & (q > 0), q, np.nan)


def _q_figure(result: FitResult, design: DesignValues | None) -> Figure:
    m = result.measurement
    f = m.frequency
    grid, z_model = _model_grid(result)
    q_measured, q_model = _q_of(m.impedance), _q_of(z_model)
    figure = _figure(7.0, 4.2)
    ax = figure.subplots()
    ax.set_yscale("log")
    hidden = int(np.sum(np.isnan(q_measured)))
    label = "measured" + (f" ({hidden} points with Re Z <= 0 not shown)" if hidden else "")
    ax.plot(f, q_measured, color=PALETTE["measured"], marker="o", markersize=2.8, linestyle="none",
            label=label)
    ax.plot(grid, q_model, color=PALETTE["model"], linewidth=1.6, label="fitted model")
    ax.set_xlabel("frequency")
    ax.set_ylabel("Q = |X| / R")
    _style(ax, x_unit="Hz")
    _mark_frequencies((ax,), design, f[0], f[-1])
    ax.legend(loc="best")
    ax.set_title(f"{_part_name(m)}: quality factor over frequency")
    return figure


def _plane_figure(result: FitResult) -> Figure:
    m = result.measurement
    grid, z_model = _model_grid(result)
    figure = _figure(6.0, 5.0)
    ax = figure.subplots()
    ax.plot(m.resistance, m.reactance, color=PALETTE["measured"], marker="o", markersize=2.8,
            linestyle="none", label="measured")
    ax.plot(z_model.real, z_model.imag, color=PALETTE["model"], linewidth=1.6, label="fitted model")
    ax.plot([m.resistance[0]], [m.reactance[0]], marker="s", color=PALETTE["ink"], linestyle="none",
            markersize=5, label="lowest frequency")
    ax.axhline(0.0, color=PALETTE["ink"], linewidth=0.6)
    ax.set_xlabel("resistance Re Z")
    ax.set_ylabel("reactance Im Z (+ inductive)")
    _style(ax, x_unit="Ω", y_unit="Ω", log_x=False)
    ax.set_aspect("equal", adjustable="datalim")  # one ohm is one ohm on both axes: arcs keep their shape
    ax.legend(loc="best")
    ax.set_title(f"{_part_name(m)}: impedance plane")
    return figure


def fit_figures(result: FitResult, design: DesignValues | None = None) -> dict[str, Figure]:
    """The figures of a fit, keyed by a short name used in file names.

    Parameters
    ----------
    result : FitResult
        The fit (measurement in Hz / ohm, model evaluated on a 5000-point log grid over the sweep).
    design : DesignValues, optional
        When given, resonances (dashed green) and operating frequencies (dotted purple) are marked.

    Returns
    -------
    dict of str to Figure
        ``"bode"``: |Z| and phase, measured versus model, each with a residual panel (relative |Z| residual
        in %, phase residual in degrees) over a band of the one-sigma noise; ``"q"``: Q = |X|/R over
        frequency; ``"impedance_plane"``: Im Z against Re Z.
    """
    return {
        "bode": _bode_figure(result, design),
        "q": _q_figure(result, design),
        "impedance_plane": _plane_figure(result),
    }
