"""Automatic model choice: rank by BIC, choose the simplest adequate model, say why."""

import numpy as np
import pytest
from spice_sim import ac_analysis

from fitz_tool.exceptions import ModelSyntaxError
from fitz_tool.fitting.selection import BIC_MARGIN, fit_auto, is_adequate
from fitz_tool.measurement import Measurement

SIGMA = 0.005


def simulated(netlist: str, fstart: float, fstop: float, seed: int) -> Measurement:
    """A part driven by 1 A AC in ngspice (independent AC analysis), log-space noise with a fixed seed."""
    f, v = ac_analysis(f"I1 0 a AC 1\n{netlist}", ["v(a)"], fstart, fstop, 20)
    rng = np.random.default_rng(seed)
    z = v["v(a)"] * np.exp(SIGMA * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size)))
    return Measurement(f, z)


def test_auto_picks_the_choke_model_and_ranks_by_bic():
    m = simulated("Rs a b 0.05\nL1 b 0 22u\nRcore b 0 20k\nCp a 0 8p", 1e3, 1e8, seed=1)
    selection = fit_auto(m)
    # With Rs far below |Z| of Cp everywhere in the sweep, Cp across the whole winding and Cp across the
    # tank only (the bead topology) fit equally well; either is right, with the netlist's values.
    chosen = selection.chosen
    assert chosen.circuit.expression in ("(Rs + L1 || Rcore) || Cp", "Rdc + Lb || Rb || Cb")
    inductance, capacitance = (v for k, v in chosen.values.items() if k[0] in "LC")
    assert inductance == pytest.approx(22e-6, rel=0.01) and capacitance == pytest.approx(8e-12, rel=0.01)
    bics = [r.bic for r in selection.ranking]
    assert bics == sorted(bics)
    marked = [r for r in selection.ranking if r.note.startswith("chosen")]
    assert len(marked) == 1 and marked[0].result is selection.chosen and marked[0].adequate
    assert "fewest free parameters" in selection.reason
    simple = next(r for r in selection.ranking if r.expression == "Rs + L1")
    assert not simple.adequate and "systematic structure" in simple.note


def test_extra_parameter_not_needed_gives_the_simpler_model():
    # A ceramic capacitor without leakage: the leaky models cannot determine Rleak and are not chosen.
    m = simulated("Rs a b 0.012\nLs b c 0.9n\nC1 c 0 1u", 1e3, 1e9, seed=2)
    selection = fit_auto(m, ["Rs + Ls + C1", "Rs + Ls + C1 || Rleak", "leaky-capacitor", "Rs + C1"])
    assert selection.chosen.circuit.expression == "Rs + Ls + C1"
    leaky = next(r for r in selection.ranking if r.expression == "Rs + Ls + C1 || Rleak")
    assert not leaky.adequate or leaky.bic >= selection.chosen.bic - BIC_MARGIN
    assert [r.expression for r in selection.ranking].count("Rs + C1 || Rleak") == 1  # preset name resolved


def test_constraints_apply_only_where_the_name_exists():
    m = simulated("Rs a b 0.35\nL1 b 0 100u", 1e3, 1e7, seed=3)
    selection = fit_auto(m, ["Rs + L1", "Rs + Ls + C1", "(Rs + L1) || Cp"], fixed={"L1": 100e-6},
                         bounds={"Cp": (1e-15, 1e-9)})
    for r in selection.ranking:
        if "L1" in r.result.parameters:
            assert r.result.parameters["L1"].vary is False
    assert selection.chosen.circuit.expression == "Rs + L1"
    assert selection.chosen.values["Rs"] == pytest.approx(0.35, rel=0.01)


def test_candidate_too_large_for_the_data_is_listed_not_fitted():
    m = Measurement(np.array([1e3, 1e4]), np.array([1.0 + 0.1j, 1.0 + 1.0j]))
    selection = fit_auto(m, ["Rs + L1", "Rs + L1 || Cp || Rcore + C2"])
    last = selection.ranking[-1]
    assert last.result is None and last.bic == float("inf") and "free parameters" in last.note
    assert selection.chosen.circuit.expression == "Rs + L1"


def test_bad_candidate_expression_is_a_syntax_error():
    m = Measurement(np.array([1e3, 1e4]), np.array([1.0 + 0.1j, 1.0 + 1.0j]))
    with pytest.raises(ModelSyntaxError):
        fit_auto(m, ["Rs + + L1"])


def test_adequacy_names_the_problem():
    m = simulated("Rs a b 0.05\nL1 b 0 22u\nRcore b 0 20k\nCp a 0 8p", 1e3, 1e8, seed=4)
    selection = fit_auto(m, ["Rs + L1"])
    ok, why = is_adequate(selection.chosen)
    assert not ok and "systematic structure" in why
    assert "no candidate is adequate" in selection.reason


def test_parallel_candidates_give_the_same_choice_as_serial():
    # the same searches in a process pool and in this process must agree exactly (deterministic seeds)
    from fitz_tool.circuit import Circuit
    from fitz_tool.fitting import selection
    from fitz_tool.measurement import Measurement

    f = np.geomspace(1e3, 1e8, 2500)
    truth = {"Rs": 0.05, "L1": 10e-6, "Cp": 5e-12}
    rng = np.random.default_rng(4)
    z = Circuit.parse("(Rs + L1) || Cp").impedance(f, truth) * np.exp(rng.normal(0, 1e-3, f.size))
    m = Measurement(f, z)
    candidates = ["Rs + L1", "(Rs + L1) || Cp", "(Rs + L1 || Rc) || Cp"]
    assert len(m) >= selection.PARALLEL_POINTS
    serial = selection.fit_auto(m, candidates, jobs=1, intervals="none")
    pooled = selection.fit_auto(m, candidates, jobs=2, intervals="none")
    assert [r.expression for r in pooled.ranking] == [r.expression for r in serial.ranking]
    assert pooled.chosen.values == serial.chosen.values
    assert serial.chosen.circuit.expression == "(Rs + L1) || Cp"
