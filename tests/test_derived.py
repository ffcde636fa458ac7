"""Design values of a fitted model, checked against handbook relations and independent numeric evaluation.

``synthetic_result`` builds a FitResult by hand (known values, Cramer-Rao covariance of the log-impedance
residuals, correlated ``uncertainties`` values) so these tests do not depend on the fitter; the other output
tests import it from here.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from uncertainties import correlated_values

from fitz_tool.circuit import Circuit
from fitz_tool.derived import design_values, frequency_derivative
from fitz_tool.exceptions import InputError
from fitz_tool.measurement import Measurement, Provenance
from fitz_tool.results import FitResult, ParameterEstimate

CHOKE = "Rs + L1 || Cp"  # a 22 uH output choke with 0.05 ohm winding resistance and 15 pF winding capacitance
CHOKE_VALUES = {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12}


def synthetic_result(expression: str = CHOKE, values: dict | None = None, frequency=None,
                     rel_noise: float = 2e-3, phase_noise: float = 2e-3, seed: int = 1,
                     fixed: tuple[str, ...] = (), source: str = "bench/output_choke.csv",
                     with_covariance: bool = True, with_uvars: bool = True) -> FitResult:
    """A FitResult at the given values for a measurement with the given noise (relative, rad)."""
    circuit = Circuit.parse(expression)
    values = dict(CHOKE_VALUES if values is None else values)
    f = np.geomspace(1e3, 30e6, 121) if frequency is None else np.asarray(frequency, dtype=float)
    rng = np.random.default_rng(seed)
    z_true, gradient = circuit.impedance_gradient(f, values)
    z_meas = z_true * np.exp(rng.normal(0, rel_noise, f.size) + 1j * rng.normal(0, phase_noise, f.size))
    measurement = Measurement(f, z_meas, sigma_lnmag=np.full(f.size, rel_noise),
                              sigma_phase=np.full(f.size, phase_noise), sigma_absolute=True,
                              provenance=Provenance(source=source, sha256="ab" * 32, form="z_polar",
                                                    steps=("read |Z| and phase",), warnings=()))
    free = [n for n in circuit.parameter_names if n not in fixed]
    dlnz = np.array([gradient[n] / z_true for n in free]).reshape(len(free), f.size)
    jac = np.hstack([dlnz.real / rel_noise, dlnz.imag / phase_noise]).T
    scale = np.array([abs(values[n]) or 1.0 for n in free])  # invert in relative (log) parameters
    jac_rel = jac * scale
    covariance = np.linalg.pinv(jac_rel.T @ jac_rel) * np.outer(scale, scale) if free else np.zeros((0, 0))
    stderr = np.sqrt(np.diag(covariance))
    correlation = covariance / np.outer(stderr, stderr)
    resid = np.log(z_meas / z_true)
    chi2 = float(np.sum((resid.real / rel_noise) ** 2 + (resid.imag / phase_noise) ** 2))
    n_free, n_res = len(free), 2 * f.size
    parameters = {}
    for name in circuit.parameter_names:
        vary = name in free
        err = float(stderr[free.index(name)]) if vary and with_covariance else None
        note = "" if err is not None else ("covariance could not be computed" if vary else "fixed by user")
        parameters[name] = ParameterEstimate(name, values[name], err, circuit.parameter_unit(name), vary,
                                             None, note)
    uvars = None
    if with_uvars:
        uvars = dict(zip(free, correlated_values([values[n] for n in free], covariance), strict=True))
    return FitResult(
        circuit=circuit, measurement=measurement, parameters=parameters, correlation_names=tuple(free),
        correlation=correlation if with_covariance else None,
        covariance=covariance if with_covariance else None,
        chi_square=chi2, reduced_chi_square=chi2 / (n_res - n_free),
        aic=chi2 + 2 * n_free, bic=chi2 + n_free * math.log(n_res),  # absolute sigmas
        n_points=f.size, n_free=n_free, success=True, message="converged (synthetic)", flags=(),
        weighting="per-point sigma of ln|Z| and phase (absolute)", uvars=uvars)


def _series_rlc():
    # a 100 nF film capacitor with 20 mohm ESR and 8 nH ESL, swept 10 kHz .. 100 MHz
    values = {"Rs": 0.02, "Ls": 8e-9, "C1": 100e-9}
    return synthetic_result("Rs + Ls + C1", values, np.geomspace(1e4, 1e8, 161)), values


def test_series_rlc_resonance_is_the_handbook_value():
    result, v = _series_rlc()
    design = design_values(result)
    assert len(design.resonances) == 1 and design.resonance_note == ""
    res = design.resonances[0]
    # series resonance f0 = 1/(2 pi sqrt(L C)): common practice, no source
    assert res.frequency.value == pytest.approx(1 / (2 * math.pi * math.sqrt(v["Ls"] * v["C1"])), rel=1e-12)
    assert res.kind == "series" and res.in_sweep
    # its uncertainty: d ln f0 = -(d ln L + d ln C)/2, with the covariance of L and C
    # (first-order propagation, common practice, no source)
    names = result.correlation_names
    i, k = names.index("Ls"), names.index("C1")
    cov = result.covariance
    var_ln = 0.25 * (cov[i, i] / v["Ls"] ** 2 + cov[k, k] / v["C1"] ** 2
                     + 2 * cov[i, k] / (v["Ls"] * v["C1"]))
    assert res.frequency.stderr == pytest.approx(res.frequency.value * math.sqrt(var_ln), rel=1e-6)


def test_capacitor_values_at_an_operating_frequency_follow_the_handbook():
    result, v = _series_rlc()
    f = 100e3
    w = 2 * math.pi * f
    point = design_values(result, [f]).points[0]
    assert point.character == "capacitive" and point.in_sweep
    x = w * v["Ls"] - 1 / (w * v["C1"])
    # C_eff = -1/(w X), ESR = R, D = w C ESR for a lossy capacitor: common practice, no source
    assert point.values["C_eff"].value == pytest.approx(-1 / (w * x), rel=1e-12)
    assert point.values["ESR"].value == pytest.approx(v["Rs"], rel=1e-12)
    assert point.values["D"].value == pytest.approx(w * point.values["C_eff"].value * v["Rs"], rel=1e-12)
    assert point.values["Q"].value == pytest.approx(1 / point.values["D"].value, rel=1e-12)
    assert point.values["abs_Z"].value == pytest.approx(math.hypot(v["Rs"], x), rel=1e-12)
    assert point.values["phase"].value == pytest.approx(math.degrees(math.atan2(x, v["Rs"])), rel=1e-12)


def test_choke_values_follow_the_handbook_and_its_parallel_resonance():
    result = synthetic_result()
    v = CHOKE_VALUES
    f = 100e3
    w = 2 * math.pi * f
    design = design_values(result, [f, 100e6])
    point = design.points[0]
    assert point.character == "inductive"
    # well below resonance the choke's L_eff ~ L and Q ~ w L / R: common practice, no source
    assert point.values["L_eff"].value == pytest.approx(v["L1"], rel=2e-3)
    assert point.values["Q"].value == pytest.approx(w * v["L1"] / v["Rs"], rel=2e-3)
    # the parallel resonance of L1 || Cp with Rs in series: |Z| maximum at 1/(2 pi sqrt(L C)) to first order
    # in the loss (common practice, no source); exact zero of X from sympy below
    (res,) = design.resonances
    assert res.kind == "parallel" and res.in_sweep
    assert res.frequency.value == pytest.approx(1 / (2 * math.pi * math.sqrt(v["L1"] * v["Cp"])), rel=1e-6)
    far = design.points[1]
    assert far.character == "capacitive" and not far.in_sweep


def test_resonance_matches_sympy_zero_of_the_reactance():
    # exact root of Im Z for (Rs + L) || C, solved symbolically by sympy (general-purpose reference library)
    R, L, C, w = sympy.symbols("R L C w", positive=True)
    z_branch, z_c = R + sympy.I * w * L, 1 / (sympy.I * w * C)
    z = sympy.expand_complex(sympy.simplify(z_branch * z_c / (z_branch + z_c)))
    roots = sympy.solve(sympy.Eq(sympy.numer(sympy.together(sympy.im(z))), 0), w)
    values = {"Rs": 30.0, "L1": 22e-6, "Cp": 15e-12}  # a lossy winding: the root differs from 1/sqrt(LC)
    subs = {R: values["Rs"], L: values["L1"], C: values["Cp"]}
    (w0,) = [float(r.subs(subs)) for r in roots if r.subs(subs).is_positive]
    result = synthetic_result("(Rs + L1) || Cp", values)
    (res,) = design_values(result).resonances
    assert res.kind == "parallel"
    assert res.frequency.value == pytest.approx(w0 / (2 * math.pi), rel=1e-10)
    assert abs(w0 - 1 / math.sqrt(values["L1"] * values["Cp"])) / w0 > 1e-6


def test_no_resonance_says_so():
    # a resistor with lead inductance never resonates: X = w L > 0 at every f (common practice, no source)
    result = synthetic_result("R1 + L1", {"R1": 10.0, "L1": 1e-9}, np.geomspace(1e3, 1e7, 41))
    design = design_values(result, [1e6])
    assert design.resonances == ()
    assert design.resonance_note.startswith("none in the sweep")


def test_resonance_outside_the_sweep_is_marked_extrapolated():
    result = synthetic_result(frequency=np.geomspace(1e3, 1e6, 61))  # choke resonates at ~8.8 MHz
    design = design_values(result)
    (res,) = design.resonances
    assert not res.in_sweep and "extrapolated" in res.frequency.label
    assert "none in the sweep" in design.resonance_note


def _mc_check(result, f, quantity, draws=4000):
    """Monte-Carlo spread of a design value over parameter draws from the covariance."""
    rng = np.random.default_rng(7)
    names = result.correlation_names
    samples = rng.multivariate_normal([result.values[n] for n in names], result.covariance, draws)
    draws_values = [{**result.values, **dict(zip(names, s, strict=True))} for s in samples]
    z = np.array([result.circuit.impedance(np.array([f]), v)[0] for v in draws_values])
    return quantity(z)


@pytest.mark.parametrize("name, quantity", [
    ("L_eff", lambda z: z.imag / (2 * math.pi * 2e6)),
    ("ESR", lambda z: z.real),
    ("Q", lambda z: np.abs(z.imag) / z.real),
    ("phase", lambda z: np.degrees(np.angle(z))),
])
def test_propagated_uncertainty_matches_monte_carlo(name, quantity):
    # J C J^T against the scatter of the quantity over parameter draws (Monte-Carlo; common practice,
    # no source). 4000 draws: the sample standard deviation is good to ~1.1 % (1/sqrt(2N)).
    result = synthetic_result()
    value = design_values(result, [2e6]).points[0].values[name]
    spread = np.std(_mc_check(result, 2e6, quantity), ddof=1)
    assert value.stderr == pytest.approx(spread, rel=0.06)


def test_propagated_uncertainty_matches_the_uncertainties_package():
    # the uncertainties package (general-purpose reference library) propagates the same correlated values
    # through the closed-form Z of Rs + L || C, written out here independently of fitz_tool's evaluator
    result = synthetic_result()
    u = result.uvars
    w = 2 * math.pi * 3e6
    # Z = Rs + j w L / (1 - w^2 L C): real part Rs, imaginary part w L / (1 - w^2 L C)
    x = w * u["L1"] / (1 - w**2 * u["L1"] * u["Cp"])
    q = x / u["Rs"]
    point = design_values(result, [3e6]).points[0].values
    assert point["Q"].value == pytest.approx(q.nominal_value, rel=1e-9)
    assert point["Q"].stderr == pytest.approx(q.std_dev, rel=1e-6)
    assert point["L_eff"].stderr == pytest.approx((x / w).std_dev, rel=1e-6)
    f0 = design_values(result).resonances[0].frequency
    f0_u = 1 / (2 * math.pi * (u["L1"] * u["Cp"]) ** 0.5)  # exact root of X for this circuit (see sympy test)
    assert f0.stderr == pytest.approx(f0_u.std_dev, rel=1e-6)


def test_uvars_alone_give_the_same_uncertainty():
    full = design_values(synthetic_result(), [1e6]).points[0].values["L_eff"]
    only_uvars = synthetic_result(with_covariance=False)
    value = design_values(only_uvars, [1e6]).points[0].values["L_eff"]
    assert value.stderr == pytest.approx(full.stderr, rel=1e-9)


def test_no_covariance_says_why():
    result = synthetic_result(with_covariance=False, with_uvars=False)
    value = design_values(result, [1e6]).points[0].values["L_eff"]
    assert value.stderr is None and "covariance could not be computed" in value.note


def test_fixed_parameters_carry_no_uncertainty():
    result = synthetic_result(fixed=("Rs",))
    # Rs fixed and L || C lossless: ESR = Rs exactly (common practice, no source)
    assert design_values(result, [1e6]).points[0].values["ESR"].stderr == pytest.approx(0.0, abs=1e-15)
    lossless = synthetic_result("L1 || C1", {"L1": 1e-6, "C1": 1e-9}, np.geomspace(1e5, 1e8, 61),
                                fixed=("L1", "C1"), with_uvars=False)
    design = design_values(lossless, [1e6])
    q = design.points[0].values["Q"]
    assert q.value == math.inf and q.stderr is None and "no loss" in q.note
    assert "fixed by the user" in design.uncertainty_note
    # lossless L || C: the parallel resonance 1/(2 pi sqrt(LC)) through the pole of Z (common practice,
    # no source)
    f0 = 1 / (2 * math.pi * math.sqrt(1e-6 * 1e-9))
    assert design.resonances[0].frequency.value == pytest.approx(f0, rel=1e-9)


def test_frequency_derivative_matches_finite_differences_with_a_cpe():
    values = {"R1": 1.0, "L1": 1e-7, "R2": 50.0, "P1_Q": 1e-5, "P1_n": 0.8}
    result = synthetic_result("R1 + L1 + R2 || P1", values)
    f = np.array([1e3, 1e5, 1e7])
    h = f * 1e-6
    numeric = (result.model_impedance(f + h) - result.model_impedance(f - h)) / (2 * h)  # central difference
    np.testing.assert_allclose(frequency_derivative(result, f), numeric, rtol=1e-7)


@pytest.mark.parametrize("frequency", [0.0, -1e3, float("nan")])
def test_an_operating_frequency_must_be_positive(frequency):
    with pytest.raises(InputError, match="above 0"):
        design_values(synthetic_result("R1 + L1", {"R1": 1.0, "L1": 1e-6}), [frequency])


def test_a_root_search_that_lands_on_the_pole_of_a_lossless_loop_still_gives_the_srf():
    # Rs + (L1 || Cp) has no loss in its loop: X runs through a pole at the parallel resonance, and for these
    # values (a Monte Carlo draw of the bundled choke) the root search evaluated Z exactly on that pole
    from fitz_tool.readers import ReadOptions, read_measurement

    f = read_measurement("sample_measurements/output_choke_scope.csv", ReadOptions(shunt=0.1)).frequency
    values = {"Rs": 0.027017216573066445, "L1": 2.218244838625876e-05, "Cp": 1.2254568514141789e-11}
    (res,) = design_values(synthetic_result(values=values, frequency=f)).resonances
    # f0 = 1 / (2 pi sqrt(L C)) for a lossless L || C: common practice, no source
    assert res.kind == "parallel"
    assert res.frequency.value == pytest.approx(1 / (2 * math.pi * math.sqrt(values["L1"] * values["Cp"])),
                                                rel=1e-12)
    assert res.frequency.stderr is not None and math.isfinite(res.frequency.stderr)
    assert res.quality is not None and res.quality.value == math.inf
