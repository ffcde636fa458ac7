"""The fit API: constraints, clean errors, honest uncertainties and flags in words.

Synthetic benches use impedances from ``Circuit.impedance`` (checked against lcapy in test_circuit.py) or from
lcapy directly, with noise added in log space from a fixed seed.
"""

import numpy as np
import pytest
import sympy

from fitz_tool.circuit import Circuit
from fitz_tool.exceptions import FitError, InputError
from fitz_tool.fitting.least_squares import fit
from fitz_tool.fitting.problem import FitProblem, problem_for
from fitz_tool.fitting.seeding import global_search, search_ranges
from fitz_tool.measurement import Measurement

F = np.logspace(3, 8, 151)
CHOKE = ("(Rs + L1 || Rcore) || Cp", {"Rs": 0.05, "L1": 22e-6, "Rcore": 20e3, "Cp": 8e-12})


def bench(expression, values, f=F, sigma=0.01, seed=0, **kwargs) -> Measurement:
    rng = np.random.default_rng(seed)
    z = Circuit.parse(expression).impedance(f, values)
    noise = sigma * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    return Measurement(f, z * np.exp(noise), **kwargs)


def test_unknown_parameter_names_are_named():
    m = bench(*CHOKE)
    with pytest.raises(InputError, match=r"fixed value for unknown parameter 'Lx'.*has Rs, L1, Rcore, Cp"):
        fit(m, CHOKE[0], fixed={"Lx": 1e-6})
    with pytest.raises(InputError, match="guess for unknown parameters 'a', 'b'"):
        fit(m, CHOKE[0], guesses={"a": 1.0, "b": 2.0})
    with pytest.raises(InputError, match="bound for unknown parameter 'Rp'"):
        fit(m, CHOKE[0], bounds={"Rp": (1, 2)})


def test_values_outside_the_physical_range_are_refused():
    m = bench(*CHOKE)
    with pytest.raises(InputError, match="Rs=-1"):
        fit(m, CHOKE[0], guesses={"Rs": -1.0})
    with pytest.raises(InputError, match="lower limit must be below"):
        fit(m, CHOKE[0], bounds={"Rs": (1.0, 0.1)})
    with pytest.raises(InputError, match="exponent must be in"):
        fit(m, "Rs + P1", fixed={"P1_n": 1.5})


def test_more_parameters_than_data_is_a_fit_error():
    m = Measurement(np.array([1e3, 1e4]), np.array([1 + 1j, 1 + 10j]))
    with pytest.raises(FitError, match="5 free parameters but 2 points give only 4 residuals"):
        fit(m, "Rs + L1 || Cp || Rcore + C2")


def test_exactly_determined_fit_says_why_there_is_no_stderr():
    m = Measurement(np.array([1e3, 1e4]), Circuit.parse("Rs + L1").impedance(np.array([1e3, 1e4]),
                                                                               {"Rs": 2.0, "L1": 1e-3}))
    result = fit(m, "Rs + C1 || R2 + L1")
    assert result.degrees_of_freedom == 0
    assert all(p.stderr is None and "degrees of freedom" in p.stderr_note for p in result.parameters.values())


def test_choke_recovered_with_consistent_uncertainty_objects():
    expression, truth = CHOKE
    result = fit(bench(*CHOKE), expression)
    assert result.success and result.flags == ()
    assert result.n_points == F.size and result.n_free == 4 and result.degrees_of_freedom == 2 * F.size - 4
    for name, true in truth.items():
        p = result.parameters[name]
        assert abs(p.value - true) < 4 * p.stderr
        assert result.uvars[name].nominal_value == pytest.approx(p.value)
        assert result.uvars[name].std_dev == pytest.approx(p.stderr)
    names = result.correlation_names
    assert names == tuple(truth)
    sd = np.sqrt(np.diag(result.covariance))
    np.testing.assert_allclose(sd, [result.parameters[n].stderr for n in names])
    np.testing.assert_allclose(np.diag(result.correlation), 1.0)
    np.testing.assert_allclose(result.covariance, result.correlation * np.outer(sd, sd), rtol=1e-9)
    # With the noise level estimated from the residuals: AIC = n ln(chi2/n) + 2k, BIC = n ln(chi2/n) + k ln n
    # (Gaussian likelihood with unknown variance; Akaike 1974, Schwarz 1978; from memory)
    n, k = 2 * F.size, 4
    base = n * np.log(result.chi_square / n)
    assert result.aic == pytest.approx(base + 2 * k, rel=1e-9, abs=1e-9)
    assert result.bic == pytest.approx(base + k * np.log(n), rel=1e-9, abs=1e-9)


def test_fixed_parameter_is_held_and_reported_as_fixed():
    expression, truth = CHOKE
    result = fit(bench(*CHOKE), expression, fixed={"Cp": 8e-12})
    p = result.parameters["Cp"]
    assert (p.value, p.vary, p.stderr, p.stderr_note) == (8e-12, False, None, "fixed by user")
    assert result.n_free == 3 and "Cp" not in result.correlation_names
    assert abs(result.values["L1"] - truth["L1"]) < 4 * result.parameters["L1"].stderr


def test_bound_that_excludes_the_truth_is_flagged():
    result = fit(bench(*CHOKE), CHOKE[0], bounds={"Rcore": (1e3, 5e3)})
    p = result.parameters["Rcore"]
    assert p.at_bound == "upper" and p.value == pytest.approx(5e3, rel=1e-2)
    assert p.stderr is None and "bound" in p.stderr_note
    assert any(f.startswith("Rcore sits at its upper bound") for f in result.flags)


def test_guesses_are_used_and_checked_against_bounds():
    expression, truth = CHOKE
    result = fit(bench(*CHOKE), expression, guesses={k: 1.3 * v for k, v in truth.items()})
    assert result.values["L1"] == pytest.approx(truth["L1"], rel=1e-2)
    with pytest.raises(InputError, match="outside its bounds"):
        fit(bench(*CHOKE), expression, guesses={"Rs": 10.0}, bounds={"Rs": (1e-3, 1.0)})


def test_resonance_far_above_the_sweep_leaves_the_capacitance_undetermined():
    # SRF of 22 uH with 0.1 pF is 107 MHz; swept only to 100 kHz, Cp has almost no effect.
    m = bench("(Rs + L1) || Cp", {"Rs": 0.05, "L1": 22e-6, "Cp": 0.1e-12}, f=np.logspace(2, 5, 61))
    result = fit(m, "(Rs + L1) || Cp")
    cp = result.parameters["Cp"]
    assert cp.at_bound or cp.stderr is None or cp.stderr > cp.value
    assert any(f.startswith("Cp ") and ("not determined" in f or "bound" in f) for f in result.flags)
    assert result.values["L1"] == pytest.approx(22e-6, rel=0.01)


def test_wrong_model_shows_residual_structure():
    result = fit(bench(*CHOKE), "Rs + L1")
    assert any("systematic structure" in f for f in result.flags)


def test_strongly_correlated_pair_is_flagged_with_its_correlation():
    # A plain RL fitted with two series resistors: only their sum is determined (Jacobian singular).
    result = fit(bench("Rs + L1", {"Rs": 1.0, "L1": 1e-4}), "Rs + R2 + L1")
    flagged = [f for f in result.flags if "correlated" in f or "standard errors missing" in f]
    assert flagged
    # Neither resistor gets a first-order error; each gets a profile interval from 0 up to about the total
    # 1 ohm (series resistances add: common practice, no source), and leaves the covariance.
    for name in ("Rs", "R2"):
        p = result.parameters[name]
        assert p.stderr is None and "consistent with 0" in p.stderr_note
        assert p.interval[0] == 0.0 and p.interval[1] == pytest.approx(1.0, rel=0.03)
        assert name not in result.correlation_names
    assert result.values["Rs"] + result.values["R2"] == pytest.approx(1.0, rel=0.01)
    assert result.parameters["L1"].stderr is not None and "L1" in result.uvars


def test_absolute_sigmas_are_not_rescaled_but_relative_ones_are():
    expression, _ = CHOKE
    base = bench(*CHOKE, sigma=0.01, seed=4)
    stderr = {}
    for absolute in (True, False):
        for stated in (0.01, 0.02):
            m = Measurement(base.frequency, base.impedance, sigma_lnmag=stated, sigma_phase=stated,
                            sigma_absolute=absolute)
            stderr[absolute, stated] = fit(m, expression).parameters["L1"].stderr
    assert stderr[True, 0.02] == pytest.approx(2 * stderr[True, 0.01], rel=1e-3)
    assert stderr[False, 0.02] == pytest.approx(stderr[False, 0.01], rel=1e-3)
    assert stderr[True, 0.01] == pytest.approx(stderr[False, 0.01], rel=0.15)  # stated sigma = true noise


def test_constant_phase_element_recovered_from_lcapy_impedance():
    lcapy = pytest.importorskip("lcapy")
    net = lcapy.R(0.2) + lcapy.L(3e-9) + lcapy.CPE(4e-6, 0.82)  # lcapy CPE: Z = 1 / (K s^alpha)
    expr = net.Z(lcapy.s).sympy
    # lcapy symbolic impedance (general-purpose circuit library), evaluated at s = j 2 pi f.
    z = np.asarray(sympy.lambdify(list(expr.free_symbols)[0], expr, "numpy")(2j * np.pi * F), dtype=complex)
    rng = np.random.default_rng(8)
    m = Measurement(F, z * np.exp(0.005 * (rng.standard_normal(F.size) + 1j * rng.standard_normal(F.size))))
    result = fit(m, "Rs + Ls + P1")
    for name, true in {"Rs": 0.2, "Ls": 3e-9, "P1_Q": 4e-6, "P1_n": 0.82}.items():
        p = result.parameters[name]
        assert abs(p.value - true) < 4 * p.stderr, name


def test_any_expression_is_seeded_not_only_presets():
    expression = "R1 + (L1 + R2) || C1 || (R3 + C2)"
    truth = {"R1": 0.3, "L1": 4.7e-6, "R2": 0.8, "C1": 220e-12, "R3": 150.0, "C2": 2.2e-9}
    result = fit(bench(expression, truth, sigma=0.002), expression)
    for name, true in truth.items():
        p = result.parameters[name]
        assert p.stderr is not None and abs(p.value - true) < 5 * p.stderr, name


def test_global_search_finds_the_optimum_from_a_poor_start():
    expression, truth = CHOKE
    circuit = Circuit.parse(expression)
    m = bench(*CHOKE, sigma=0.001)
    problem: FitProblem = problem_for(circuit, m, circuit.parameter_names, {})
    box = np.log10(np.array([search_ranges(circuit, m)[n] for n in circuit.parameter_names]))
    far = box[:, 1] - 0.1  # every parameter near the top of its box
    x = global_search(problem, box[:, 0], box[:, 1], box[:, 0] - 6, box[:, 1] + 6, starts=[far])
    np.testing.assert_allclose(10**x, [truth[n] for n in circuit.parameter_names], rtol=0.01)


def test_phase_residual_is_wrapped():
    circuit = Circuit.parse("R1")
    m = Measurement(np.array([1.0, 2.0]), np.exp(1j * np.radians([179.0, -179.0])))
    problem = problem_for(circuit, m, ("R1",), {})
    # Z_model = 1 ohm at phase 0; measured phase +-179 deg: the wrapped residual is -+179 deg, never 181
    # (phase differences wrapped to (-180, 180]: common practice, no source).
    np.testing.assert_allclose(np.degrees(problem.residual(np.array([0.0]))[2:]), [-179.0, 179.0])
    problem_neg = problem_for(Circuit.parse("R1 + L1"), m, ("R1", "L1"), {})
    assert np.all(np.abs(problem_neg.residual(np.array([0.0, -3.0]))[2:]) <= np.pi)


def test_cli_reports_a_bad_model_in_one_line(tmp_path, capsys):
    from fitz_tool.cli import main

    path = tmp_path / "choke.csv"
    f = np.logspace(3, 6, 31)
    z = Circuit.parse("Rs + L1").impedance(f, {"Rs": 0.1, "L1": 1e-4})
    rows = "\n".join(f"{a:.6g},{abs(b):.6g},{np.degrees(np.angle(b)):.6g}" for a, b in zip(f, z, strict=True))
    path.write_text("Frequency (Hz),|Z| (ohm),Phase (deg)\n" + rows + "\n")
    code = main(["fit", str(path), "--model", "Rs + + L"])
    err = capsys.readouterr().err
    assert code == 3
    assert err.count("\n") == 1 and "column 6" in err
