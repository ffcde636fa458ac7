"""Design values at and near a resonance: resonator Q, 'undefined at resonance', 'undetermined'."""

import math

import numpy as np
import pytest

from fitz_tool.circuit import Circuit
from fitz_tool.derived import design_values
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement


def noisy(expression, values, f, noise=1e-4, seed=3):
    rng = np.random.default_rng(seed)
    z = Circuit.parse(expression).impedance(f, values)
    return Measurement(f, z * np.exp(rng.normal(0, noise, f.size) + 1j * rng.normal(0, noise, f.size)))


def test_series_rlc_resonator_q_is_the_handbook_value():
    v = {"Rs": 0.5, "L1": 1e-6, "C1": 1e-9}
    f = np.geomspace(1e5, 1e8, 91)
    result = fit(noisy("Rs + L1 + C1", v, f), "Rs + L1 + C1")
    (res,) = design_values(result).resonances
    fitted = result.values
    # series R-L-C: Q = (1/R) sqrt(L/C) (textbook relation, from memory)
    expected = math.sqrt(fitted["L1"] / fitted["C1"]) / fitted["Rs"]
    assert res.kind == "series"
    assert res.quality.value == pytest.approx(expected, rel=1e-9)
    assert res.quality.value == pytest.approx(math.sqrt(v["L1"] / v["C1"]) / v["Rs"], rel=0.01)
    # its uncertainty comes from those of R, L and C (first order; dominated by R here)
    rel_r = result.parameters["Rs"].stderr / fitted["Rs"]
    assert res.quality.stderr / res.quality.value == pytest.approx(rel_r, rel=0.3)
    assert res.bandwidth == pytest.approx(res.frequency.value / res.quality.value, rel=1e-12)


def test_parallel_tank_resonator_q_is_the_handbook_value():
    v = {"Rp": 2e3, "L1": 10e-6, "C1": 100e-12}
    f = np.geomspace(1e5, 1e8, 91)
    result = fit(noisy("Rp || L1 || C1", v, f), "Rp || L1 || C1")
    (res,) = design_values(result).resonances
    fitted = result.values
    # parallel tank: Q = R sqrt(C/L) (textbook relation, from memory)
    assert res.kind == "parallel"
    assert res.quality.value == pytest.approx(fitted["Rp"] * math.sqrt(fitted["C1"] / fitted["L1"]), rel=1e-9)


def test_values_at_resonance_are_undefined_and_say_why():
    v = {"Rs": 0.05, "L1": 1e-6, "C1": 1e-9}
    f = np.geomspace(1e5, 1e8, 91)
    result = fit(noisy("Rs + L1 + C1", v, f), "Rs + L1 + C1")
    f0 = design_values(result).resonances[0].frequency.value
    point = design_values(result, [f0 * 1.00001, f0 * 3]).points
    near, far = point
    for key in ("Q", "D"):
        value = near.values[key]
        assert math.isnan(value.value) and value.note.startswith("undefined at resonance")
    reactive = "L_eff" if "L_eff" in near.values else "C_eff"
    assert near.values[reactive].note.startswith("undefined at resonance")
    # ESR stays meaningful at resonance: the series resistance itself (common practice, no source)
    assert near.values["ESR"].value == pytest.approx(result.values["Rs"], rel=1e-6)
    assert math.isfinite(far.values["L_eff"].value)


def test_values_built_from_an_undetermined_parameter_say_so():
    # a capacitor measured far below any resonance: its lead inductance cannot be seen in the data
    v = {"Rs": 0.05, "C1": 1e-6}
    f = np.geomspace(10, 1e3, 40)
    result = fit(noisy("Rs + C1", v, f), "Rs + Ls + C1", bounds={"Ls": (1e-12, 1e-9)})
    assert result.parameters["Ls"].undetermined
    low, high = design_values(result, [1e3, 1e9]).points
    # at 1 kHz the capacitance hardly depends on Ls: still a number
    assert math.isfinite(low.values["C_eff"].value)
    # at 1 GHz the part's reactance is set by Ls alone: undetermined, never a number with an error
    reactive = high.values.get("L_eff") or high.values.get("C_eff")
    assert math.isnan(reactive.value) and reactive.note.startswith("undetermined: built from Ls")
