"""Parts simulated in ngspice (independent AC analysis), then fitted with no starting values.

Each bench: a 1 A AC current source drives the part, so V(a) is its impedance in ohm. Noise is added in log
space (relative in |Z|, absolute in phase) with a fixed seed.
"""

import numpy as np
import pytest
from spice_sim import ac_analysis

from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement

SIGMA = 0.005  # noise in ln|Z| and in phase (rad)

CHOKE = ("(Rs + L1 || Rcore) || Cp", {"Rs": 0.05, "L1": 22e-6, "Rcore": 20e3, "Cp": 8e-12},
         "Rs a b 0.05\nL1 b 0 22u\nRcore b 0 20k\nCp a 0 8p")
CERAMIC = ("Rs + Ls + C1", {"Rs": 0.012, "Ls": 0.9e-9, "C1": 1e-6}, "Rs a b 0.012\nLs b c 0.9n\nC1 c 0 1u")
BEAD = ("Rdc + Lb || Rb || Cb", {"Rdc": 0.04, "Lb": 1.2e-6, "Rb": 350, "Cb": 1.5e-12},
        "Rdc a b 0.04\nLb b 0 1.2u\nRb b 0 350\nCb b 0 1.5p")


def simulate(netlist: str, fstart: float, fstop: float, points_per_decade: int = 20):
    """Frequency (Hz) and impedance (ohm) of the part between node a and ground, by ngspice."""
    f, v = ac_analysis(f"I1 0 a AC 1\n{netlist}", ["v(a)"], fstart, fstop, points_per_decade)
    return f, v["v(a)"]


def bench(f, z, seed, absolute=True):
    rng = np.random.default_rng(seed)
    noisy = z * np.exp(SIGMA * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size)))
    if absolute:
        return Measurement(f, noisy, sigma_lnmag=SIGMA, sigma_phase=SIGMA, sigma_absolute=True)
    return Measurement(f, noisy)


def assert_recovered(result, truth, within=4.0):
    for name, true in truth.items():
        p = result.parameters[name]
        assert p.stderr is not None, name
        assert abs(p.value - true) < within * p.stderr, (name, p.value, true, p.stderr)


@pytest.mark.parametrize(("part", "band"), [(CHOKE, (1e3, 1e8)), (CERAMIC, (1e3, 1e9)), (BEAD, (1e5, 3e9))])
def test_simulated_part_recovered_within_its_uncertainty(part, band):
    expression, truth, netlist = part
    f, z = simulate(netlist, *band)  # ngspice AC analysis
    result = fit(bench(f, z, seed=1), expression)
    assert result.success and not result.flags
    assert_recovered(result, truth)
    # With absolute sigmas the reduced chi-square of a right model is near 1 (chi-square with ~2M dof;
    # common practice, no source).
    assert 0.75 < result.reduced_chi_square < 1.3
    # AIC = chi2 + 2k, BIC = chi2 + k ln n for Gaussian errors of known sigma (Akaike 1974, Schwarz 1978;
    # from memory)
    k, n = len(truth), 2 * f.size
    assert result.aic == pytest.approx(result.chi_square + 2 * k, rel=1e-12)
    assert result.bic == pytest.approx(result.chi_square + k * np.log(n), rel=1e-12)


def test_proportional_weighting_recovers_the_choke_too():
    expression, truth, netlist = CHOKE
    f, z = simulate(netlist, 1e3, 1e8)  # ngspice AC analysis
    result = fit(bench(f, z, seed=2, absolute=False), expression)
    assert_recovered(result, truth)
    # The noise level estimated from the residuals: chi-square / dof with unit weights ~ SIGMA^2
    # (common practice, no source).
    assert result.reduced_chi_square == pytest.approx(SIGMA**2, rel=0.2)


def test_exact_simulation_gives_the_netlist_values():
    expression, truth, netlist = CHOKE
    f, z = simulate(netlist, 1e3, 1e8)  # ngspice AC analysis, numdgt=15, no noise
    result = fit(Measurement(f, z), expression)
    for name, true in truth.items():
        assert result.values[name] == pytest.approx(true, rel=1e-6), name


def test_series_resonance_of_the_fitted_capacitor():
    expression, truth, netlist = CERAMIC
    f, z = simulate(netlist, 1e3, 1e9, points_per_decade=40)  # ngspice AC analysis
    result = fit(bench(f, z, seed=3), expression)
    v = result.values
    f0_fit = 1 / (2 * np.pi * np.sqrt(v["Ls"] * v["C1"]))  # series resonance (common practice, no source)
    # Where the simulated reactance crosses zero, by log-linear interpolation of the noise-free data.
    i = int(np.flatnonzero((z.imag[:-1] < 0) & (z.imag[1:] >= 0))[0])
    t = -z.imag[i] / (z.imag[i + 1] - z.imag[i])
    f0_sim = f[i] * (f[i + 1] / f[i]) ** t
    assert f0_fit == pytest.approx(f0_sim, rel=2e-3)
    assert f0_fit == pytest.approx(1 / (2 * np.pi * np.sqrt(0.9e-9 * 1e-6)), rel=2e-3)


def test_quality_factor_of_a_fitted_inductor():
    f, z = simulate("Rs a b 0.35\nL1 b 0 100u", 1e3, 1e7)  # ngspice AC analysis
    result = fit(bench(f, z, seed=4), "Rs + L1")
    w = 2 * np.pi * 100e3
    q_fit = w * result.values["L1"] / result.values["Rs"]  # Q = w L / R (common practice, no source)
    k = int(np.argmin(abs(f - 100e3)))
    assert f[k] == pytest.approx(100e3)
    assert q_fit == pytest.approx(z[k].imag / z[k].real, rel=0.01)  # Q = X / R of the simulated part
    assert q_fit == pytest.approx(w * 100e-6 / 0.35, rel=0.01)


def test_dissipation_factor_of_a_fitted_capacitor():
    f, z = simulate("Rs a b 0.02\nC1 b 0 47u", 10, 1e5)  # ngspice AC analysis
    result = fit(bench(f, z, seed=5), "Rs + C1")
    w = 2 * np.pi * 1e3
    d_fit = w * result.values["C1"] * result.values["Rs"]  # D = w C ESR (common practice, no source)
    k = int(np.argmin(abs(f - 1e3)))
    assert d_fit == pytest.approx(z[k].real / -z[k].imag, rel=0.01)  # D = R / |X| of the simulated part
    assert d_fit == pytest.approx(w * 47e-6 * 0.02, rel=0.01)
