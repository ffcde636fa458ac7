"""Figures are built, leave their inputs alone, and render to non-trivial image files."""

from __future__ import annotations

import io

import matplotlib.image
import numpy as np
from matplotlib.figure import Figure
from test_derived import synthetic_result

from fitz_tool.derived import design_values
from fitz_tool.outputs.plots import PALETTE, fit_figures, plot_measurement

# Okabe & Ito (2008) colour-blind-safe palette, hex values from memory
OKABE_ITO = {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}


def _png(figure: Figure) -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=120)
    return buffer.getvalue()


def _axes_have_ink(figure: Figure, png: bytes) -> None:
    """Every axes area of the rendered image has pixels that are neither white nor one flat colour."""
    image = matplotlib.image.imread(io.BytesIO(png))[..., :3]
    height, width = image.shape[:2]
    for ax in figure.axes:
        box = ax.get_window_extent()
        x0, x1 = int(box.x0 * width / figure.bbox.width), int(box.x1 * width / figure.bbox.width)
        y0 = int(height - box.y1 * height / figure.bbox.height)
        y1 = int(height - box.y0 * height / figure.bbox.height)
        inner = image[y0 + 3:y1 - 3, x0 + 3:x1 - 3]
        coloured = np.any(np.abs(inner - 1.0) > 0.1, axis=-1)
        assert coloured.mean() > 0.005, f"axes {ax.get_title() or ax.get_ylabel()!r} looks empty"


def test_measurement_plot_shows_magnitude_and_phase_with_engineering_axes():
    result = synthetic_result()
    m = result.measurement
    before = (m.frequency.copy(), m.impedance.copy())
    figure = plot_measurement(m)
    assert isinstance(figure, Figure) and len(figure.axes) == 2
    mag, phase = figure.axes
    assert mag.get_yscale() == "log" and mag.get_xscale() == "log"
    figure.canvas.draw()
    labels = [t.get_text() for t in phase.get_xticklabels() if t.get_text()]
    assert any("kHz" in t for t in labels) and any("MHz" in t for t in labels)
    png = _png(figure)
    assert len(png) > 10_000
    _axes_have_ink(figure, png)
    np.testing.assert_array_equal(m.frequency, before[0])
    np.testing.assert_array_equal(m.impedance, before[1])


def test_fit_figures_are_complete_and_non_trivial():
    result = synthetic_result()
    design = design_values(result, [100e3])
    figures = fit_figures(result, design)
    # 22 uH || 15 pF: most points crowd the origin of the impedance plane, so that view is left out
    assert set(figures) == {"bode", "q", "resistance_reactance"}
    assert len(figures["bode"].axes) == 4  # |Z|, |Z| residual, phase, phase residual
    for figure in figures.values():
        png = _png(figure)
        assert len(png) > 10_000
        _axes_have_ink(figure, png)
        svg = io.BytesIO()
        figure.savefig(svg, format="svg")
        assert b"<svg" in svg.getvalue()[:500]


def test_bode_residual_panels_carry_a_noise_band_of_the_stated_sigma():
    result = synthetic_result(rel_noise=3e-3, phase_noise=2e-3)
    bode = fit_figures(result, None)["bode"]
    rmag, rphase = bode.axes[1], bode.axes[3]
    band = rmag.collections[0].get_paths()[0].vertices[:, 1]
    assert np.isclose(band.max(), 0.3) and np.isclose(band.min(), -0.3)  # 3e-3 relative = 0.3 %
    band = rphase.collections[0].get_paths()[0].vertices[:, 1]
    assert np.isclose(band.max(), np.degrees(2e-3))


def test_plots_use_the_colour_blind_safe_palette():
    assert set(PALETTE.values()) - {"#BBBBBB"} <= OKABE_ITO
    bode = fit_figures(synthetic_result(), None)["bode"]
    colours = {line.get_color().upper() for line in bode.axes[0].get_lines()}
    assert colours <= OKABE_ITO
