"""Plots an engineer can read: labelled 2 and 5 ticks on short log axes, unit symbols, legends clear of the
data, R and X over frequency where the impedance plane shows little, and a one-page summary."""

from __future__ import annotations

import io

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import EngFormatter
from test_derived import synthetic_result

from fitz_tool.derived import design_values
from fitz_tool.measurement import Measurement
from fitz_tool.outputs.plots import _label_minor_ticks, fit_figures, plane_is_degenerate, summary_figure

F = np.geomspace(20.0, 5e6, 120)


def _minor_labels(axis_limits: tuple[float, float]) -> list[str]:
    figure = Figure()
    FigureCanvasAgg(figure)
    ax = figure.subplots()
    ax.set_yscale("log")
    ax.plot([1, 2], list(axis_limits))
    ax.set_ylim(*axis_limits)
    ax.yaxis.set_major_formatter(EngFormatter(unit="\u03a9", sep=" "))
    _label_minor_ticks(ax)
    figure.canvas.draw()
    return [t.get_text() for t in ax.yaxis.get_minorticklabels() if t.get_text()]


def test_short_log_axes_label_their_2_and_5_ticks():
    # a capacitor's 22 mohm dip on an axis of three decades: 50 mohm, 200 mohm, 2 ohm ... are labelled
    labels = _minor_labels((0.02, 20.0))
    for text in ("50 m\u03a9", "200 m\u03a9", "2 \u03a9", "5 \u03a9"):
        assert text in labels
    assert _minor_labels((1e-3, 1e3)) == []  # six decades: the decade labels are enough


def _capacitor(esr: float = 0.022, c: float = 470e-6, esl: float = 14e-9) -> Measurement:
    w = 2 * np.pi * F
    return Measurement(F, esr + 1j * w * esl + 1 / (1j * w * c))


def test_impedance_plane_of_a_capacitor_is_degenerate_and_r_x_is_shown():
    # a capacitor with ESR draws a vertical line at R = ESR (common practice, no source)
    assert plane_is_degenerate(_capacitor())
    # a lossy resonator (R 10 ohm || L || C, near its resonance only) draws a full circle
    f = np.geomspace(0.5e6, 2e6, 80)
    w = 2 * np.pi * f
    y = 1 / 10.0 + 1 / (1j * w * 2.533e-6) + 1j * w * 10e-9
    assert not plane_is_degenerate(Measurement(f, 1 / y))


def test_every_fit_figure_has_its_legend_outside_the_data_and_unit_symbols():
    result = synthetic_result()
    figures = fit_figures(result, design_values(result, [100e3]))
    assert "resistance_reactance" in figures
    for key, figure in figures.items():
        figure.canvas.draw()
        assert all(ax.get_legend() is None for ax in figure.axes), key  # no legend inside an axes
        assert len(figure.legends) == 1, key
        box = figure.legends[0].get_window_extent()
        for ax in figure.axes:
            assert not box.overlaps(ax.get_window_extent()), (key, ax.get_ylabel())
    rx = figures["resistance_reactance"]
    labels = [t.get_text() for ax in rx.axes for t in ax.get_yticklabels() + ax.get_yticklabels(minor=True)]
    assert any("\u03a9" in t for t in labels) and not any("ohm" in t for t in labels)


def test_summary_page_holds_bode_residuals_q_and_the_values():
    result = synthetic_result()
    design = design_values(result, [])
    page = summary_figure(result, design, verdict="converged; no flags")
    assert isinstance(page, Figure) and page.get_figwidth() > page.get_figheight()  # landscape
    tables = [child for ax in page.axes for child in ax.tables]
    assert len(tables) == 1
    cells = {cell.get_text().get_text() for cell in tables[0].get_celld().values()}
    assert {"Rs", "L1", "Cp"} <= cells and any(text.startswith("SRF") for text in cells)
    assert any("\u00b5H" in text for text in cells)
    ylabels = {ax.get_ylabel() for ax in page.axes}
    assert {"|Z|", "phase (deg)", "residual", "Q = |X| / R"} <= ylabels
    buffer = io.BytesIO()
    page.savefig(buffer, format="png", dpi=80)
    assert len(buffer.getvalue()) > 20_000
