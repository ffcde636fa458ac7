"""Monte-Carlo calibration: the standard errors a fit reports match the scatter of repeated estimates.

Noise draws of one known part (log-space noise: relative in |Z|, absolute in phase), each fitted from no
starting values; for each parameter the mean reported standard error must be within 0.7-1.4 of the
standard deviation of the estimates (Monte-Carlo check of first-order uncertainties: common practice,
no source).
"""

import numpy as np
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement

# An output choke of 47 uH with 0.12 ohm winding resistance, 50 kohm core loss and 4.7 pF between turns.
EXPRESSION = "(Rs + L1 || Rcore) || Cp"
TRUTH = {"Rs": 0.12, "L1": 47e-6, "Rcore": 50e3, "Cp": 4.7e-12}
F = np.logspace(3, 8, 101)


def draws(n: int, sigma: float, absolute: bool, seed: int):
    circuit = Circuit.parse(EXPRESSION)
    z = circuit.impedance(F, TRUTH)
    rng = np.random.default_rng(seed)
    values, errors = [], []
    for _ in range(n):
        noisy = z * np.exp(sigma * (rng.standard_normal(F.size) + 1j * rng.standard_normal(F.size)))
        sig = {"sigma_lnmag": sigma, "sigma_phase": sigma, "sigma_absolute": True} if absolute else {}
        result = fit(Measurement(F, noisy, **sig), circuit)
        values.append([result.values[k] for k in TRUTH])
        errors.append([result.parameters[k].stderr for k in TRUTH])
    return np.array(values), np.array(errors, dtype=float)


@pytest.mark.slow
def test_reported_stderr_matches_scatter_with_noise_level_from_residuals():
    values, errors = draws(200, sigma=0.01, absolute=False, seed=21)
    ratio = errors.mean(axis=0) / values.std(axis=0, ddof=1)
    assert np.all((ratio > 0.7) & (ratio < 1.4)), dict(zip(TRUTH, ratio, strict=True))
    # and the estimates are unbiased within their scatter / sqrt(n) (a few standard errors of the mean)
    mean_error = values.std(axis=0, ddof=1) / np.sqrt(200)
    bias = (values.mean(axis=0) - np.array(list(TRUTH.values()))) / mean_error
    assert np.all(np.abs(bias) < 4), dict(zip(TRUTH, bias, strict=True))


@pytest.mark.slow
def test_reported_stderr_matches_scatter_with_absolute_sigmas():
    values, errors = draws(100, sigma=0.02, absolute=True, seed=22)
    ratio = errors.mean(axis=0) / values.std(axis=0, ddof=1)
    assert np.all((ratio > 0.7) & (ratio < 1.4)), dict(zip(TRUTH, ratio, strict=True))
    # With absolute sigmas the reported error does not depend on the draw (weights trusted, not rescaled).
    assert np.all(errors.std(axis=0) / errors.mean(axis=0) < 0.05)
