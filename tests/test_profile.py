"""Profile-likelihood intervals where the first-order standard error does not hold.

Method: profile likelihood confidence intervals (Venzon and Moolgavkar, Appl. Statist. 37 (1988) 87; Bates
and Watts, "Nonlinear Regression Analysis and Its Applications", Wiley 1988, ch. 6; from memory). For a
model linear in its parameters the profile interval at a chi-square rise of one reduced chi-square equals
+/- the standard error exactly; near a linear optimum it agrees closely.
"""

import numpy as np
import pytest
from spice_sim import ac_analysis

from fitz_tool.circuit import Circuit
from fitz_tool.derived import design_values
from fitz_tool.exceptions import InputError
from fitz_tool.fitting.least_squares import fit
from fitz_tool.fitting.selection import is_adequate
from fitz_tool.measurement import Measurement

CHOKE = ("(Rs + L1 || Rcore) || Cp", {"Rs": 0.05, "L1": 22e-6, "Rcore": 20e3, "Cp": 8e-12})


def noisy(z: np.ndarray, f: np.ndarray, sigma: float, seed: int) -> Measurement:
    rng = np.random.default_rng(seed)
    noise = sigma * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    return Measurement(f, z * np.exp(noise))


def test_esr_hidden_below_the_noise_gets_an_interval_from_zero_and_a_flag():
    # A 270 pF capacitor with 22 nH lead inductance, 20 mohm ESR and 25 kohm leakage, simulated in ngspice
    # (independent AC analysis) over 3 kHz - 30 MHz: the series resonance (65 MHz) lies above the sweep, so
    # the ESR adds at most 0.15 % of |Z| as real part, below the 1 % noise.
    netlist = "I1 0 a AC 1\nRs a b 0.02\nLs b c 22n\nC1 c 0 270p\nRleak c 0 25k"
    f, v = ac_analysis(netlist, ["v(a)"], 3e3, 3e7, 20)
    result = fit(noisy(v["v(a)"], f, 0.01, seed=3), "Rs + Ls + C1 || Rleak")
    rs = result.parameters["Rs"]
    assert rs.stderr is None and rs.interval is not None
    low, high = rs.interval
    assert low == 0.0 and 0.02 < high < 10.0  # consistent with 0, and the truth lies inside
    assert "consistent with 0" in rs.stderr_note and "profile likelihood" in rs.stderr_note
    assert any(flag.startswith("Rs ") and "not determined" in flag for flag in result.flags)
    assert "Rs" not in result.correlation_names and "Rs" not in result.uvars  # left out of propagation
    for name, true in {"Ls": 22e-9, "C1": 270e-12, "Rleak": 25e3}.items():
        p = result.parameters[name]
        assert p.stderr is not None and abs(p.value - true) < 5 * p.stderr, name
    assert not is_adequate(result)[0]
    assert "leaves out Rs" in design_values(result, at=[1e6]).uncertainty_note


def test_well_determined_parameters_profile_agrees_with_the_standard_error():
    expression, truth = CHOKE
    m = noisy(Circuit.parse(expression).impedance(np.logspace(3, 8, 151), truth), np.logspace(3, 8, 151),
              0.01, seed=0)
    first_order = fit(m, expression, intervals="none")
    profiled = fit(m, expression, intervals="all")
    assert first_order.flags == () and profiled.flags == ()
    for name in truth:
        p, q = first_order.parameters[name], profiled.parameters[name]
        assert q.value == p.value and q.interval is not None
        low, high = q.interval
        assert q.value - low == pytest.approx(p.stderr, rel=0.1), name
        assert high - q.value == pytest.approx(p.stderr, rel=0.1), name
        assert q.stderr == pytest.approx(p.stderr, rel=0.1)
    # correlations are kept; the covariance carries the profile standard errors
    np.testing.assert_allclose(np.sqrt(np.diag(profiled.covariance)),
                               [profiled.parameters[n].stderr for n in profiled.correlation_names])
    np.testing.assert_allclose(profiled.correlation, first_order.correlation, atol=1e-9)


def test_profile_of_a_model_linear_in_its_coordinate_equals_the_standard_error():
    # ln|Z| of a resistor is linear in log10 R, and its phase does not depend on R: the profile interval in
    # log10 R is +/- the standard error exactly (linear least squares, Bates and Watts 1988, from memory).
    f = np.logspace(2, 5, 41)
    result = fit(noisy(np.full(f.size, 47.0 + 0j), f, 0.02, seed=5), "R1", intervals="all")
    p = result.parameters["R1"]
    se_log10 = p.stderr / (np.log(10) * p.value)
    low, high = p.interval
    assert np.log10(p.value / low) == pytest.approx(se_log10, rel=1e-3)
    assert np.log10(high / p.value) == pytest.approx(se_log10, rel=1e-3)


def test_poorly_determined_core_loss_gets_a_one_sided_interval_not_a_symmetric_error():
    # Core loss of 240 kohm behind a 150 uH winding with 22 ohm, swept 34 Hz - 340 kHz (SRF 70 kHz): the
    # loss shows only near resonance, where the winding resistance already damps it.
    expression = "(Rs + L1 || Rcore) || Cp"
    truth = {"Rs": 22.3, "L1": 151.8e-6, "Rcore": 242e3, "Cp": 34.3e-12}
    f = np.logspace(np.log10(34.2), np.log10(34.2) + 4, 201)
    result = fit(noisy(Circuit.parse(expression).impedance(f, truth), f, 0.01, seed=12), expression)
    rcore = result.parameters["Rcore"]
    assert rcore.interval is not None
    low, high = rcore.interval
    assert 0 < low < rcore.value < high
    assert rcore.stderr is None and "Rcore" not in result.correlation_names  # no symmetric error claimed
    assert any(flag.startswith("Rcore is") for flag in result.flags)
    # the truth lies within the interval widened to 5 sigma-equivalents on each side
    assert rcore.value - 5 * (rcore.value - low) <= truth["Rcore"] <= rcore.value + 5 * (high - rcore.value)


def test_interval_mode_is_checked():
    m = noisy(np.full(11, 10.0 + 0j), np.logspace(2, 4, 11), 0.01, seed=1)
    with pytest.raises(InputError, match="intervals='some'"):
        fit(m, "R1", intervals="some")
