"""The search finds the global minimum on narrow, under-sampled resonances, and scales to large files."""

import numpy as np
import pytest

from fitz_tool.fitting.least_squares import SCATTER_FLAG, fit
from fitz_tool.measurement import Measurement

TRUTH = {"Rs": 0.05, "L1": 10e-6, "Cp": 5e-12}  # Q = w0 L / Rs ~ 28,000 at about 22.5 MHz


def choke_impedance(f, rs, l1, cp):
    """(Rs + j w L) || 1/(j w C), written out (series and parallel impedance: common practice, no source)."""
    w = 2 * np.pi * f
    return 1 / (1 / (rs + 1j * w * l1) + 1j * w * cp)


def cramer_rao(f, noise):
    """Cramer-Rao sigma of (Rs, L1, Cp) for white noise in ln|Z| and phase (Fisher information at the truth,
    numerical derivatives of the closed form above)."""
    base = np.array([TRUTH["Rs"], TRUTH["L1"], TRUTH["Cp"]])
    rows = []
    for i in range(3):
        step = base.copy()
        step[i] *= 1 + 1e-6
        d = (np.log(choke_impedance(f, *step)) - np.log(choke_impedance(f, *base))) / (base[i] * 1e-6)
        rows.append(np.concatenate([d.real, d.imag]) / noise)
    jac = np.array(rows).T
    return np.sqrt(np.diag(np.linalg.inv(jac.T @ jac)))


def test_high_q_choke_between_samples_reaches_the_global_minimum():
    # 30 points per decade: the 800 Hz wide peak at 22.5 MHz falls between samples (spacing ~8 %)
    rng = np.random.default_rng(2)
    noise = 1e-3
    for _ in range(20):
        f = np.geomspace(1e4, 1e8, 121) * 10 ** rng.uniform(0, 1 / 30)
        z = choke_impedance(f, *TRUTH.values())
        m = Measurement(f, z * np.exp(rng.normal(0, noise, f.size) + 1j * rng.normal(0, noise, f.size)))
        result = fit(m, "(Rs + L1) || Cp", intervals="none")
        sigma = cramer_rao(f, noise)
        for (name, true), s in zip(TRUTH.items(), sigma, strict=True):
            assert abs(result.values[name] - true) < 6 * s, (name, result.values[name], result.message)
        assert not any(flag.startswith(SCATTER_FLAG) for flag in result.flags)


def test_a_large_file_is_searched_on_a_decimated_sweep_and_polished_on_all_points():
    rng = np.random.default_rng(3)
    f = np.geomspace(1e4, 1e8, 50_001)
    z = choke_impedance(f, *TRUTH.values())
    m = Measurement(f, z * np.exp(rng.normal(0, 1e-3, f.size) + 1j * rng.normal(0, 1e-3, f.size)))
    result = fit(m, "(Rs + L1) || Cp")
    assert "polished on all" in result.message and "of 50001 points" in result.message
    sigma = cramer_rao(f, 1e-3)
    for (name, true), s in zip(TRUTH.items(), sigma, strict=True):
        assert abs(result.values[name] - true) < 6 * s


def test_a_model_far_from_the_data_is_flagged_in_words():
    f = np.geomspace(1e4, 1e8, 121)
    rng = np.random.default_rng(4)
    z = choke_impedance(f, *TRUTH.values()) * np.exp(rng.normal(0, 1e-3, f.size))
    result = fit(Measurement(f, z), "Rs + L1")
    flag = next(flag for flag in result.flags if flag.startswith(SCATTER_FLAG))
    assert "times the point-to-point scatter" in flag and "local minimum" in flag


@pytest.mark.parametrize("points", [50, 400])
def test_scatter_estimate_matches_the_noise_it_was_given(points):
    # second differences of white noise have variance 6 sigma^2 (common practice, no source)
    from fitz_tool.fitting.scatter import scatter_sigma

    rng = np.random.default_rng(5)
    sigma = 2e-3
    smooth = np.linspace(0, 1, points) ** 2
    estimate = scatter_sigma(smooth + rng.normal(0, sigma, points), rng.normal(0, sigma, points))
    assert estimate == pytest.approx(sigma, rel=0.35 if points == 50 else 0.12)


def test_figures_of_a_long_sweep_draw_a_thinned_copy():
    from fitz_tool.outputs.plots import PLOT_POINTS, fit_figures

    rng = np.random.default_rng(6)
    f = np.geomspace(1e4, 1e8, 20_001)
    z = choke_impedance(f, *TRUTH.values()) * np.exp(rng.normal(0, 1e-3, f.size))
    result = fit(Measurement(f, z), "(Rs + L1) || Cp", intervals="none")
    figures = fit_figures(result)
    sizes = [len(line.get_xdata()) for fig in figures.values() for ax in fig.axes for line in ax.lines]
    sizes += [len(c.get_offsets()) for fig in figures.values() for ax in fig.axes for c in ax.collections]
    # measured points thinned to PLOT_POINTS (+ the |Z| extremes); model curves on their own 5,000-point grid
    assert max(sizes) <= max(PLOT_POINTS + 2, 5000)
    assert any(PLOT_POINTS <= s <= PLOT_POINTS + 2 for s in sizes)
    assert result.n_points == 20_001  # the fit itself used every point
