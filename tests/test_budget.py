"""Uncertainty budget (GUM) against a Monte Carlo reference written here and against handbook relations.

The Monte Carlo reference (JCGM 101:2008, 5.9 and 7): draw every systematic offset from its rectangular
distribution (one value for the whole sweep), draw fresh noise for every point, apply both to the true
impedance, refit by the fit's own least-squares objective from the true values, and take the standard
deviation of the refitted values. The first-order budget, computed from ONE noisy bench, must give the
same combined standard uncertainty within 10 %.
"""

import math

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import least_squares

import fitz_tool as ft
from fitz_tool.budget import AccuracyTable, BudgetInputs, coverage_factor, uncertainty_budget
from fitz_tool.circuit import Circuit
from fitz_tool.exceptions import InputError
from fitz_tool.fitting.problem import problem_for
from fitz_tool.measurement import Measurement


def _bench(expression, truth, f, rel, phase_deg, seed):
    """Noisy bench data of a known circuit, with the noise level stated (absolute sigmas)."""
    z = Circuit.parse(expression).impedance(f, truth)
    rng = np.random.default_rng(seed)
    z = z * np.exp(rng.normal(0, rel, f.size) + 1j * np.radians(rng.normal(0, phase_deg, f.size)))
    return Measurement(f, z).with_stated_noise(rel, math.radians(phase_deg))


def _apply_offsets(z, f, inputs: BudgetInputs, rng):
    """The bench errors as physics has them: a gain (1 + e) on |Z|, a phase offset, a shunt or load value
    off by (1 + e) scaling Z, a channel delay e leaving exp(-j w e) (common practice, no source)."""
    def draw(limit):
        return rng.uniform(-limit, limit) if limit else 0.0

    mag, ph = draw(inputs.magnitude_accuracy), draw(inputs.phase_accuracy)
    if inputs.accuracy_table is not None:
        t_mag, t_ph = rng.uniform(-1, 1), rng.uniform(-1, 1)
        a_mag, a_ph = inputs.accuracy_table.at(f)
        mag, ph = t_mag * a_mag, t_ph * a_ph
    scale = (1 + draw(inputs.shunt_tolerance)) * (1 + draw(inputs.load_tolerance))
    skew = draw(inputs.skew_uncertainty)
    return z * (1 + mag) * np.exp(1j * ph) * scale * np.exp(-2j * np.pi * f * skew)


def _monte_carlo_reference(expression, truth, f, rel, phase_deg, inputs, draws, seed=1):
    """Standard deviation of the refitted parameters over draws of offsets and noise."""
    circuit = Circuit.parse(expression)
    z_true = circuit.impedance(f, truth)
    names = circuit.parameter_names
    x0 = np.log10([truth[n] for n in names])
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(draws):
        z = z_true * np.exp(rng.normal(0, rel, f.size) + 1j * np.radians(rng.normal(0, phase_deg, f.size)))
        z = _apply_offsets(z, f, inputs, rng)
        m = Measurement(f, z).with_stated_noise(rel, math.radians(phase_deg))
        problem = problem_for(circuit, m, tuple(names), {})
        sol = least_squares(problem.residual, x0, jac=problem.jacobian, method="lm")
        out.append(10 ** sol.x)
    return dict(zip(names, np.std(np.array(out), axis=0, ddof=1), strict=True))


# (description, expression, truth, frequencies, noise rel, noise deg, inputs); invented parts, the check
# value is the Monte Carlo reference computed in the test.
CASES = [
    ("inductor through a 0.1 ohm shunt, scope",
     "(Rs + L1) || Cp", {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12}, np.geomspace(1e3, 20e6, 30), 3e-3, 0.2,
     BudgetInputs(magnitude_accuracy=0.005, phase_accuracy=math.radians(0.3), shunt_tolerance=0.01,
                  skew_uncertainty=1e-9)),
    ("capacitor on an impedance analyzer (accuracy table, load standard)",
     "Rs + Ls + C1", {"Rs": 0.02, "Ls": 10e-9, "C1": 1e-6}, np.geomspace(100, 30e6, 30), 1e-3, 0.05,
     BudgetInputs(accuracy_table=AccuracyTable(np.array([50.0, 1e5, 1e8]), np.array([0.001, 0.001, 0.01]),
                                               np.radians([0.05, 0.05, 0.5])),
                  load_tolerance=0.002)),
    ("high-Q inductor, phase accuracy dominating the resistance",
     "Rs + L1", {"Rs": 0.07, "L1": 22e-6}, np.geomspace(50e3, 200e3, 15), 1e-3, 0.01,
     BudgetInputs(magnitude_accuracy=0.002, phase_accuracy=math.radians(0.05))),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_combined_uncertainty_matches_a_monte_carlo_refit_within_10_percent(case):
    _, expression, truth, f, rel, phase_deg, inputs = case
    # JCGM 101:2008 (Monte Carlo propagation) as the reference for the GUM first-order budget
    reference = _monte_carlo_reference(expression, truth, f, rel, phase_deg, inputs, draws=400)
    result = ft.fit(_bench(expression, truth, f, rel, phase_deg, seed=7), expression)
    budget = uncertainty_budget(result, inputs)
    for name, u_ref in reference.items():
        u_c = budget.parameters[name].u_combined
        assert u_c == pytest.approx(u_ref, rel=0.10), name
        # the type B part is not negligible in any of these cases (the test would not test it otherwise)
        assert budget.parameters[name].u_type_b > 0.2 * budget.parameters[name].u_noise or name == "Cp"


def test_high_q_resistance_is_dominated_by_the_phase_accuracy_and_named_so():
    _, expression, truth, f, rel, phase_deg, inputs = CASES[2]
    result = ft.fit(_bench(expression, truth, f, rel, phase_deg, seed=7), expression)
    budget = uncertainty_budget(result, inputs, at=[100e3])
    entry = budget.design["ESR at 100 kHz"]
    share = {c.key: c.share for c in entry.contributions}
    assert share["phase_accuracy"] > 0.9
    assert entry.dominant.startswith("ESR at 100 kHz: the 0.05 deg phase accuracy contributes")
    assert "a tighter phase accuracy would cut it most" in entry.advice


@pytest.mark.parametrize("expression,truth", [
    ("(Rs + L1) || Cp", {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12}),
    ("Rs + Ls + C1", {"Rs": 0.02, "Ls": 10e-9, "C1": 1e-6}),
])
def test_a_pure_gain_error_moves_r_l_and_c_by_exactly_that_fraction(expression, truth):
    # Scaling Z by (1 + e) scales every R and L by (1 + e) and every C by 1/(1 + e): dR/de = R, dL/de = L,
    # dC/de = -C at first order (common practice, no source).
    f = np.geomspace(1e3, 20e6, 25)
    result = ft.fit(_bench(expression, truth, f, 3e-3, 0.2, seed=3), expression)
    budget = uncertainty_budget(result, BudgetInputs(magnitude_accuracy=0.01, shunt_tolerance=0.02))
    for name, entry in budget.parameters.items():
        sign = -1.0 if name.startswith("C") else 1.0
        c = {row.key: row for row in entry.contributions}
        for key in ("magnitude_accuracy", "shunt"):
            assert c[key].sensitivity == pytest.approx(sign * entry.value, rel=1e-6), (name, key)
        # rectangular: u = a / sqrt(3) (GUM 4.3.7)
        assert c["shunt"].standard_uncertainty == pytest.approx(0.02 / math.sqrt(3), rel=1e-12)
        assert abs(c["shunt"].contribution) == pytest.approx(entry.value * 0.02 / math.sqrt(3), rel=1e-6)


def test_a_phase_error_moves_the_series_resistance_of_a_high_q_part_by_about_abs_z_dphi():
    # Z e^{j dphi} = (R + jX)(1 + j dphi) gives R' = R - X dphi: dR/dphi = -X ~ -|Z| for Q >> 1 (common
    # practice, no source). A narrow sweep around 100 kHz, so |Z| is one number.
    truth = {"Rs": 0.07, "L1": 22e-6}
    f = np.geomspace(98e3, 102e3, 9)
    result = ft.fit(_bench("Rs + L1", truth, f, 1e-4, 0.002, seed=5), "Rs + L1")
    budget = uncertainty_budget(result, BudgetInputs(phase_accuracy=math.radians(0.05)), at=[100e3])
    abs_z = abs(Circuit.parse("Rs + L1").impedance(np.array([100e3]), truth)[0])
    for entry in (budget.parameters["Rs"], budget.design["ESR at 100 kHz"]):
        (row,) = [c for c in entry.contributions if c.key == "phase_accuracy"]
        assert row.sensitivity == pytest.approx(-abs_z, rel=0.02)


def test_noise_only_says_so_and_keeps_the_fit_uncertainty():
    truth = {"Rs": 0.05, "L1": 22e-6}
    f = np.geomspace(1e3, 1e6, 20)
    result = ft.fit(_bench("Rs + L1", truth, f, 3e-3, 0.2, seed=2), "Rs + L1")
    budget = ft.uncertainty_budget(result)
    assert budget.noise_only
    assert "noise only" in budget.note
    for name, p in result.parameters.items():
        assert budget.parameters[name].u_combined == pytest.approx(p.stderr, rel=1e-12)
        # absolute sigmas: infinite degrees of freedom, k = 2
        assert budget.expanded[name] == pytest.approx(2 * p.stderr, rel=1e-12)
    text = ft.format_fit_report(result, None, ft.design_values(result), budget=budget)
    assert "Uncertainties are from noise only (type A)" in text


def test_few_points_with_an_estimated_noise_level_widen_k_by_the_t_distribution():
    # Welch-Satterthwaite (GUM G.4.1) with type A only gives nu_eff = nu_A = 2N - k; k = t_95.45(nu_eff)
    # (GUM G.3.4); GUM table G.2 gives t_95.45(5) = 2.65 (from memory; checked with scipy.stats.t).
    truth = {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12}
    f = np.geomspace(1e5, 20e6, 4)
    z = Circuit.parse("(Rs + L1) || Cp").impedance(f, truth)
    z = z * np.exp(np.random.default_rng(4).normal(0, 3e-3, 4) * (1 + 1j))
    result = ft.fit(Measurement(f, z), "(Rs + L1) || Cp")
    assert result.degrees_of_freedom == 5
    budget = uncertainty_budget(result, BudgetInputs())
    entry = budget.parameters["L1"]
    assert entry.nu_eff == pytest.approx(5)
    assert entry.coverage_factor == pytest.approx(2.65, abs=0.005)
    assert entry.coverage_factor == pytest.approx(stats.t.ppf(0.977250, 5), rel=1e-4)
    assert coverage_factor(math.inf) == 2.0
    # a dominant type B input brings nu_eff (and k) back towards the normal value
    big = uncertainty_budget(result, BudgetInputs(magnitude_accuracy=0.2)).parameters["L1"]
    assert big.nu_eff > 5 * (big.u_combined / entry.u_combined) ** 4 * 0.99
    assert big.coverage_factor < entry.coverage_factor


def test_monte_carlo_check_agrees_for_a_nearly_linear_budget_and_is_attached_everywhere():
    _, expression, truth, f, rel, phase_deg, inputs = CASES[0]
    result = ft.fit(_bench(expression, truth, f, rel, phase_deg, seed=7), expression)
    budget = uncertainty_budget(result, inputs, at=[100e3], monte_carlo=120, seed=2)
    assert budget.monte_carlo_draws == 120
    for name in ("L1", "Cp", "L_eff at 100 kHz"):
        mc = budget.entry(name).monte_carlo
        assert mc is not None and mc.agrees, name
        assert mc.u == pytest.approx(budget.entry(name).u_combined, rel=0.15)
        assert mc.low < budget.entry(name).value < mc.high
    with pytest.raises(InputError, match="at least"):
        uncertainty_budget(result, inputs, monte_carlo=5)


def test_accuracy_table_interpolates_in_log_frequency_and_refuses_outside(tmp_path):
    path = tmp_path / "analyzer_accuracy.csv"
    path.write_text("frequency,magnitude %,phase deg\n1k,0.1,0.05\n1M,0.3,0.25\n")
    table = ft.read_accuracy_table(path)
    mag, ph = table.at(np.array([1e3, math.sqrt(1e3 * 1e6), 1e6]))
    # geometric mean of the ends sits halfway in log frequency
    assert mag == pytest.approx([0.001, 0.002, 0.003])
    assert np.degrees(ph) == pytest.approx([0.05, 0.15, 0.25])
    with pytest.raises(InputError, match="covers"):
        table.at(np.array([100.0]))
    bad = tmp_path / "bad.csv"
    bad.write_text("f,m,p\n1k,0.1,0.05\n500,0.1,0.05\n")
    with pytest.raises(InputError, match="ascending"):
        ft.read_accuracy_table(bad)
    with pytest.raises(InputError, match="not both"):
        BudgetInputs(magnitude_accuracy=0.01, accuracy_table=table)


def test_an_input_that_moves_a_value_past_first_order_is_named_and_the_monte_carlo_disagrees():
    # 0.5 deg on a Q ~ 200 inductor: |Z| dphi (about 0.12 ohm at 100 kHz) exceeds Rs = 70 mohm, so Rs
    # (fitted in log coordinates) cannot follow linearly; the JCGM 101 propagation shows it.
    truth = {"Rs": 0.07, "L1": 22e-6}
    f = np.geomspace(50e3, 200e3, 15)
    result = ft.fit(_bench("Rs + L1", truth, f, 1e-3, 0.01, seed=7), "Rs + L1")
    inputs = BudgetInputs(phase_accuracy=math.radians(0.5))
    budget = uncertainty_budget(result, inputs)
    assert "may not hold" in budget.parameters["Rs"].note
    assert "may not hold" not in budget.parameters["L1"].note
    assert "may not hold for Rs" in budget.note
    checked = uncertainty_budget(result, inputs, monte_carlo=100, seed=1)
    rs = checked.parameters["Rs"]
    # first order reaches a negative resistance; the refits cannot, so the Monte Carlo interval starts near 0
    # and is narrower than y +/- U (a rectangular input dominates: k = 2 is conservative, GUM G.2.3)
    assert rs.value - rs.expanded < 0
    assert rs.monte_carlo.low > -0.05 * rs.value
    assert rs.monte_carlo.interval_ratio < 0.85 and "narrower" in rs.monte_carlo.note
    assert checked.parameters["L1"].monte_carlo.agrees


def test_a_common_gain_and_phase_error_passes_open_short_unchanged_and_cancels_with_a_load():
    # Why the limits are stated for the corrected impedance (fitz_tool.budget.inputs): a complex factor k
    # common to the part and the standards gives (k Zm - k Zs) / (1 - (k Zm - k Zs) / (k Zo - k Zs)) =
    # k Z_dut for open/short, and cancels in Z_std OS(Zm) / OS(Zl) (algebra of the correction formulas,
    # common practice, no source).
    from fitz_tool.corrections import compensate_fixture

    f = np.geomspace(1e4, 1e7, 12)
    w = 2 * np.pi * f
    zs, yo = 0.02 + 1j * w * 5e-9, 1j * w * 2e-12            # fixture: series 20 mohm + 5 nH, shunt 2 pF
    z_dut = Circuit.parse("Rs + L1").impedance(f, {"Rs": 0.05, "L1": 22e-6})

    def through_fixture(z):
        return zs + 1 / (yo + 1 / z)

    k = (1 + 0.004) * np.exp(1j * math.radians(0.2))

    def measured(z):
        return Measurement(f, k * z)

    m, z_open, z_short = measured(through_fixture(z_dut)), measured(zs + 1 / yo), measured(zs)
    z_load = measured(through_fixture(np.full(f.size, 50.0 + 0j)))
    open_short = compensate_fixture(m, open=z_open, short=z_short).impedance
    assert open_short == pytest.approx(k * z_dut, rel=1e-9)
    with_load = compensate_fixture(m, open=z_open, short=z_short, load=z_load, load_value=50.0).impedance
    assert with_load == pytest.approx(z_dut, rel=1e-9)


def test_monte_carlo_draws_past_zero_give_no_design_values():
    # Cp known to +/- 2000 %: about half of the normal draws of Cp are negative, which is no circuit, so
    # the design values get no Monte Carlo check (under 90 % usable draws); every parameter keeps its own
    from test_derived import synthetic_result

    result = synthetic_result(rel_noise=0.3, phase_noise=0.3, frequency=np.geomspace(1e3, 1e6, 30))
    assert result.parameters["Cp"].stderr > 10 * result.parameters["Cp"].value
    budget = uncertainty_budget(result, None, (1e5,), monte_carlo=200)
    assert all(entry.monte_carlo is None for entry in budget.design.values())
    assert all(e.monte_carlo is not None and e.monte_carlo.agrees for e in budget.parameters.values())
