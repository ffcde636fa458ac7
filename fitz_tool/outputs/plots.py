"""Figures of a measurement and of a fit: Bode view with residuals, Q over frequency, R and X over frequency,
impedance plane, and a one-page summary for slides.

Every function builds a fresh ``matplotlib.figure.Figure`` on its own Agg canvas (no display, no pyplot state
and no change to the session's backend), never changes its inputs and returns the Figure for the caller to
save or show. Colours are the Okabe-Ito
palette (Okabe & Ito, "Color Universal Design", 2008), safe for the common forms of colour-blindness.
Axes use matplotlib's ``EngFormatter`` so ticks read ``10 kHz``, ``1 kΩ``; a log axis that shows fewer than
``MINOR_LABEL_DECADES`` decades also labels its 2 and 5 ticks, so a peak or a dip can be read off. Legends sit
outside the data area (above the panels), never on the points.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import EngFormatter, LogLocator, NullFormatter

from ..measurement import Measurement
from ..results import FitResult

if TYPE_CHECKING:
    from ..derived import DesignValues

__all__ = ["PALETTE", "MINOR_LABEL_DECADES", "plot_measurement", "fit_figures", "summary_figure",
           "plane_is_degenerate"]

#: A log axis spanning fewer decades than this labels its 2 and 5 ticks as well as the decades.
MINOR_LABEL_DECADES = 4.0

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


def _label_minor_ticks(ax, which: str = "xy") -> None:
    """Label the 2 and 5 ticks of each log axis of ``ax`` that spans fewer than MINOR_LABEL_DECADES decades.

    Call after the data (and limits) are set; the major formatter's unit is reused for the minor labels.
    """
    for name, axis, scale, limits in (("x", ax.xaxis, ax.get_xscale(), ax.get_xlim()),
                                      ("y", ax.yaxis, ax.get_yscale(), ax.get_ylim())):
        if name not in which or scale != "log" or not (limits[0] > 0 and limits[1] > 0):
            continue
        if np.log10(max(limits) / min(limits)) >= MINOR_LABEL_DECADES:
            continue
        major = axis.get_major_formatter()
        if not isinstance(major, EngFormatter):
            continue  # an axis without labels of its own (the frequency axis of an upper panel)
        unit = major.unit
        axis.set_minor_locator(LogLocator(base=10.0, subs=(2.0, 5.0)))
        axis.set_minor_formatter(EngFormatter(unit=unit, sep=" "))
        axis.set_tick_params(which="minor", labelsize=_STYLE["font.size"] - 1)


def _legend_above(figure: Figure, axes, ncols: int = 4, where: str = "outside upper center") -> None:
    """One legend for the figure, outside the data (above the panels unless ``where`` says otherwise)."""
    handles, labels = [], []
    for ax in axes:
        for handle, label in zip(*ax.get_legend_handles_labels(), strict=True):
            if label not in labels:
                handles.append(handle)
                labels.append(label)
    if handles:
        figure.legend(handles, labels, loc=where, ncols=min(ncols, len(handles)),
                      frameon=False, fontsize=_STYLE["legend.fontsize"])


def _part_name(measurement: Measurement) -> str:
    from pathlib import Path

    source = measurement.provenance.source
    return Path(source).name if source else "part"


#: Most measured points a figure draws; longer sweeps are thinned for display only (the fit used them all).
PLOT_POINTS = 4000


def thinned(measurement: Measurement) -> Measurement:
    """At most about ``PLOT_POINTS`` evenly spaced points of a long sweep, plus its largest and smallest |Z|
    (so a peak or a dip stays drawn); the measurement itself when it is short enough."""
    n = len(measurement)
    if n <= PLOT_POINTS:
        return measurement
    keep = np.zeros(n, dtype=bool)
    keep[np.linspace(0, n - 1, PLOT_POINTS).round().astype(int)] = True
    keep[[int(np.argmax(measurement.magnitude)), int(np.argmin(measurement.magnitude))]] = True
    return measurement.select(keep, f"drew {int(keep.sum())} of {n} points (thinned for display)")


def _displayed(result: FitResult) -> FitResult:
    """The fit with its measurement thinned for display (values, errors and counts unchanged)."""
    m = thinned(result.measurement)
    return result if m is result.measurement else dataclasses.replace(result, measurement=m)


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
    measurement = thinned(measurement)
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
    _label_minor_ticks(ax_mag)
    _label_minor_ticks(ax_phase)
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
            return m.sigma_lnmag, m.sigma_phase, "stated noise, \u00b1 1 sigma"
        scale = float(np.sqrt(max(result.reduced_chi_square, 0.0)))
        return m.sigma_lnmag * scale, m.sigma_phase * scale, "noise scaled to the residuals, \u00b1 1 sigma"
    rms_mag = float(np.sqrt(np.mean(residual.real**2)))
    rms_phase = float(np.sqrt(np.mean(residual.imag**2)))
    return np.full(n, rms_mag), np.full(n, rms_phase), "noise from residual RMS, \u00b1 1 sigma"


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


def _draw_bode(ax_mag, ax_phase, m: Measurement, grid: np.ndarray, z_model: np.ndarray, *, markersize: float,
               linewidth: float) -> tuple[dict, dict]:
    """Measured points and the model curve on a |Z| (log) and a phase axis; returns the two styles."""
    dots = dict(color=PALETTE["measured"], marker="o", markersize=markersize, linestyle="none")
    line = dict(color=PALETTE["model"], linewidth=linewidth)
    ax_mag.set_yscale("log")
    ax_mag.plot(m.frequency, m.magnitude, label="measured", **dots)
    ax_mag.plot(grid, np.abs(z_model), label="fitted model", **line)
    ax_phase.plot(m.frequency, m.phase_deg, **dots)
    ax_phase.plot(grid, np.degrees(np.angle(z_model)), **line)
    return dots, line


def _bode_figure(result: FitResult, design: DesignValues | None) -> Figure:
    m = result.measurement
    f = m.frequency
    grid, z_model = _model_grid(result)
    residual = result.log_residuals()
    sig_mag, sig_phase, noise_label = _noise_levels(result)
    figure = _figure(7.5, 8.0)
    ax_mag, ax_rmag, ax_phase, ax_rphase = figure.subplots(4, 1, sharex=True, height_ratios=[3, 1.3, 2, 1.3])
    _draw_bode(ax_mag, ax_phase, m, grid, z_model, markersize=2.8, linewidth=1.6)
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
    ax_mag.set_title(f"{_part_name(m)}: measured and fitted  {result.circuit.expression}")
    _legend_above(figure, (ax_mag, ax_rmag))
    _label_minor_ticks(ax_mag)
    _label_minor_ticks(ax_rphase)
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
    ax.set_title(f"{_part_name(m)}: quality factor over frequency")
    _legend_above(figure, (ax,))
    _label_minor_ticks(ax)
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
    ax.set_title(f"{_part_name(m)}: impedance plane")
    _legend_above(figure, (ax,), ncols=3)
    return figure


def plane_is_degenerate(measurement: Measurement) -> bool:
    """True when the impedance plane shows little: R nearly constant beside a wide X (a capacitor or a choke
    far from resonance draws a vertical line), or most points crowded into a corner because |Z| spans more
    than three decades."""
    r, x = measurement.resistance, measurement.reactance
    span_r, span_x = float(np.ptp(r)), float(np.ptp(x))
    if span_x == 0 or span_r < 0.05 * span_x:
        return True
    mag = measurement.magnitude
    return bool(np.median(mag) < 0.01 * mag.max())


def _rx_figure(result: FitResult, design: DesignValues | None) -> Figure:
    """R and |X| over frequency on log axes; inductive points filled, capacitive points open."""
    m = result.measurement
    f = m.frequency
    grid, z_model = _model_grid(result)
    figure = _figure(7.0, 5.6)
    ax_r, ax_x = figure.subplots(2, 1, sharex=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_meas = np.where(m.resistance > 0, m.resistance, np.nan)
        r_model = np.where(z_model.real > 0, z_model.real, np.nan)
    ax_r.set_yscale("log")
    ax_x.set_yscale("log")
    ax_r.plot(f, r_meas, color=PALETTE["measured"], marker="o", markersize=2.8, linestyle="none",
              label="measured")
    ax_r.plot(grid, r_model, color=PALETTE["model"], linewidth=1.6, label="fitted model")
    inductive = m.reactance > 0
    ax_x.plot(f[inductive], m.reactance[inductive], color=PALETTE["measured"], marker="o", markersize=2.8,
              linestyle="none", label="inductive (X > 0)")
    ax_x.plot(f[~inductive], -m.reactance[~inductive], color=PALETTE["measured"], marker="o",
              markerfacecolor="white", markersize=2.8, linestyle="none", label="capacitive (X < 0)")
    ax_x.plot(grid, np.abs(z_model.imag), color=PALETTE["model"], linewidth=1.6)
    ax_r.set_ylabel("R = Re Z")
    ax_x.set_ylabel("|X| = |Im Z|")
    ax_x.set_xlabel("frequency")
    _style(ax_r, x_unit=None, y_unit="\u03a9")
    _style(ax_x, x_unit="Hz", y_unit="\u03a9")
    _mark_frequencies((ax_r, ax_x), design, f[0], f[-1])
    ax_r.set_title(f"{_part_name(m)}: resistance and reactance over frequency")
    _legend_above(figure, (ax_r, ax_x), ncols=3)
    for ax in (ax_r, ax_x):
        _label_minor_ticks(ax)
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
        frequency; ``"resistance_reactance"``: R and |X| over frequency; ``"impedance_plane"``: Im Z against
        Re Z, left out when the plane shows little (:func:`plane_is_degenerate`).
    """
    result = _displayed(result)
    figures = {
        "bode": _bode_figure(result, design),
        "q": _q_figure(result, design),
        "resistance_reactance": _rx_figure(result, design),
    }
    if not plane_is_degenerate(result.measurement):
        figures["impedance_plane"] = _plane_figure(result)
    return figures


def summary_figure(result: FitResult, design: DesignValues | None = None,
                   rows: list[tuple[str, str]] | None = None, verdict: str = "") -> Figure:
    """One landscape page for a slide: |Z| and phase with their residuals, Q, and the table of values.

    Parameters
    ----------
    result, design
        The fit and (optionally) its design values (resonances are marked).
    rows : list of (name, value text), optional
        The table at the lower right (default: the fitted parameters as the terminal report shows them).
    verdict : str
        One line under the title (e.g. the report's verdict).
    """
    result = _displayed(result)
    from .report import parameter_rows

    m = result.measurement
    f = m.frequency
    grid, z_model = _model_grid(result)
    residual = result.log_residuals()
    figure = _figure(11.0, 6.2)
    grid_spec = figure.add_gridspec(3, 2, height_ratios=[3, 2, 1.3], width_ratios=[1.35, 1])
    ax_mag = figure.add_subplot(grid_spec[0, 0])
    ax_phase = figure.add_subplot(grid_spec[1, 0], sharex=ax_mag)
    ax_res = figure.add_subplot(grid_spec[2, 0], sharex=ax_mag)
    ax_q = figure.add_subplot(grid_spec[0, 1])
    ax_table = figure.add_subplot(grid_spec[1:, 1])
    dots, line = _draw_bode(ax_mag, ax_phase, m, grid, z_model, markersize=2.4, linewidth=1.5)
    ax_phase.set_ylim(-95, 95)
    ax_phase.set_yticks([-90, -45, 0, 45, 90])
    ax_res.axhline(0.0, color=PALETTE["ink"], linewidth=0.6)
    ax_res.plot(f, 100 * residual.real, color=PALETTE["measured"], marker="o", markersize=2.0, linewidth=0.5,
                label="|Z| residual (%)")
    ax_res.plot(f, np.degrees(residual.imag), color=PALETTE["noise"], marker="s", markersize=2.0,
                linewidth=0.5, label="phase residual (deg)")
    ax_mag.set_ylabel("|Z|")
    ax_phase.set_ylabel("phase (deg)")
    ax_res.set_ylabel("residual")
    ax_res.set_xlabel("frequency")
    _style(ax_mag, x_unit=None, y_unit="\u03a9")
    _style(ax_phase, x_unit=None)
    _style(ax_res, x_unit="Hz")
    for ax in (ax_mag, ax_phase):
        ax.tick_params(which="both", labelbottom=False)
    q_measured, q_model = _q_of(m.impedance), _q_of(z_model)
    ax_q.set_yscale("log")
    ax_q.plot(f, q_measured, **dots)
    ax_q.plot(grid, q_model, **line)
    ax_q.set_ylabel("Q = |X| / R")
    ax_q.set_xlabel("frequency")
    _style(ax_q, x_unit="Hz")
    _mark_frequencies((ax_mag, ax_phase, ax_res, ax_q), design, f[0], f[-1])
    if rows is None:
        rows = [(name, value) for name, value, _ in parameter_rows(result)]
        if design is not None:
            from .report import format_derived_value

            rows += [(f"SRF ({r.kind})", format_derived_value(r.frequency)) for r in design.resonances]
    ax_table.axis("off")
    table = ax_table.table(cellText=[list(r) for r in rows] or [["-", "-"]], colLabels=["value", "result"],
                           loc="upper center", cellLoc="left", colLoc="left", colWidths=[0.32, 0.68])
    table.auto_set_font_size(False)
    table.set_fontsize(9)
    table.scale(1.0, 1.35)
    for (row, _), cell in table.get_celld().items():
        cell.set_edgecolor(PALETTE["grid"])
        if row == 0:
            cell.set_text_props(weight="bold")
    ax_table.set_title(f"model  {result.circuit.expression}", fontsize=_STYLE["axes.titlesize"], loc="left")
    title = f"{_part_name(m)}: fitted equivalent circuit"
    figure.suptitle(title + (f"\n{verdict}" if verdict else ""), fontsize=_STYLE["axes.titlesize"] + 1)
    _legend_above(figure, (ax_mag, ax_res, ax_q), ncols=5, where="outside lower center")
    for ax in (ax_mag, ax_res):
        _label_minor_ticks(ax)
    _label_minor_ticks(ax_q, "y")  # a narrow panel: decades only along frequency
    return figure
