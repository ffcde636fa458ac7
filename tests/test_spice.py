"""The exported SPICE subcircuit is the fitted model: ngspice AC analysis reproduces its impedance."""

from __future__ import annotations

import datetime
import itertools
import math

import numpy as np
import pytest
from spice_sim import ac_analysis
from test_derived import synthetic_result

from fitz_tool.circuit import Circuit
from fitz_tool.exceptions import OutputError
from fitz_tool.outputs.spice import CPE_TOLERANCE, cpe_network, to_spice_subcircuit
from fitz_tool.presets import PRESETS

SWEEP = np.geomspace(1e3, 100e6, 41)

# Representative parts (invented values of our own); the preset loop below covers the named topologies.
REPRESENTATIVE = {
    "Rs + L1 || Cp": {"Rs": 0.05, "L1": 22e-6, "Cp": 15e-12},
    "Rs + Ls + C1": {"Rs": 0.02, "Ls": 8e-9, "C1": 100e-9},
    "Rs + Ls + C1 || Rp": {"Rs": 0.5, "Ls": 12e-9, "C1": 4.7e-6, "Rp": 2e6},
    "(Rw + L1) || Cw || Rcore": {"Rw": 0.3, "L1": 100e-6, "Cw": 8e-12, "Rcore": 40e3},
    "Rdc + L1 || R1 || C1": {"Rdc": 0.04, "L1": 1.2e-6, "R1": 350.0, "C1": 1.5e-12},
    "R1 + L1 + R2 || P1": {"R1": 0.8, "L1": 20e-9, "R2": 5e3, "P1_Q": 2e-6, "P1_n": 0.87},
    "Rs + P1": {"Rs": 0.1, "P1_Q": 1e-4, "P1_n": 0.35},
}


def _simulated_impedance(netlist: str, name: str, f_low: float, f_high: float):
    # drive pin 1 from an AC voltage source, pin 2 at ground: Z = V / I = -1 / i(vdrive)
    bench = f"{netlist}\nX1 p 0 {name}\nVdrive p 0 DC 0 AC 1\n"
    freq, vectors = ac_analysis(bench, ["i(vdrive)"], f_low, f_high, points_per_decade=10)
    return freq, -1.0 / vectors["i(vdrive)"]


def _check_against_ngspice(expression: str, values: dict) -> float:
    result = synthetic_result(expression, values, SWEEP)
    netlist = to_spice_subcircuit(result, name="PART_UNDER_TEST")
    freq, z_spice = _simulated_impedance(netlist, "PART_UNDER_TEST", SWEEP[0], SWEEP[-1])
    z_model = result.model_impedance(freq)
    error = float(np.max(np.abs(z_spice / z_model - 1)))
    # ngspice AC analysis (general-purpose reference simulator): same impedance to 1e-6 relative
    assert error < 1e-6, f"{expression}: ngspice differs by {error:.2e}"
    return error


@pytest.mark.parametrize("expression", list(REPRESENTATIVE))
def test_ngspice_reproduces_the_exported_network(expression):
    _check_against_ngspice(expression, REPRESENTATIVE[expression])


def _values_for(expression: str) -> dict[str, float]:
    """Plausible invented values by element kind, cycling through a few decades."""
    pools = {"R": itertools.cycle([0.2, 800.0, 15.0]), "L": itertools.cycle([4.7e-6, 3e-9]),
             "C": itertools.cycle([2.2e-9, 30e-12, 1e-6])}
    values = {}
    for element in Circuit.parse(expression).elements:
        if element.kind == "P":
            values[element.name + "_Q"], values[element.name + "_n"] = 3e-6, 0.8
        else:
            values[element.name] = next(pools[element.kind])
    return values


@pytest.mark.parametrize("preset", list(PRESETS))
def test_ngspice_reproduces_every_preset(preset):
    expression = PRESETS[preset].expression
    _check_against_ngspice(expression, _values_for(expression))


@pytest.mark.parametrize("n", [0.05, 0.5, 0.8, 0.97])
def test_cpe_network_is_passive_and_accurate_over_the_sweep(n):
    net = cpe_network(1e-5, n, 10.0, 1e7)
    assert net.max_relative_error < CPE_TOLERANCE
    assert all(r > 0 and c > 0 for r, c in net.cells)
    assert net.series_resistance >= 0 and (net.series_capacitance is None or net.series_capacitance > 0)
    # independent check on a different grid against the CPE definition Z = 1/(Q (jw)^n)
    # (common practice, no source)
    f = np.geomspace(10.0, 1e7, 777)
    exact = 1 / (1e-5 * (2j * np.pi * f) ** n)
    assert np.max(np.abs(net.impedance(f) / exact - 1)) < 1e-8


def test_cpe_network_degrades_outside_the_sweep_as_documented():
    net = cpe_network(1e-5, 0.6, 1e3, 1e5)
    far = np.array([1e-1, 1e9])
    exact = 1 / (1e-5 * (2j * np.pi * far) ** 0.6)
    assert np.all(np.abs(net.impedance(far) / exact - 1) > 1e-3)


def test_header_summarizes_the_fit_and_values_keep_full_precision():
    result = synthetic_result()
    when = datetime.datetime(2031, 5, 4, 12, 0, tzinfo=datetime.UTC)
    text = to_spice_subcircuit(result, name="CHOKE_22U", now=when)
    lines = text.splitlines()
    assert all(line.startswith("*") for line in lines[: lines.index(".subckt CHOKE_22U 1 2")])
    assert "* model: Rs + L1 || Cp" in text and "2031-05-04T12:00:00Z" in text
    assert "reduced chi-square" in text and "bench/output_choke.csv" in text
    element_lines = {line.split()[0]: line.split() for line in lines if line and line[0] in "RLCV"}
    assert float(element_lines["L1"][3]) == 22e-6 and float(element_lines["Cp"][3]) == 15e-12
    assert lines[-1] == ".ends CHOKE_22U"


def test_hostile_strings_cannot_break_out_of_comments():
    result = synthetic_result(source="evil\nR99 1 2 1\n.end\n.csv")
    text = to_spice_subcircuit(result)
    assert not any(line.startswith(("R99", ".end ")) or line == ".end" for line in text.splitlines())


def test_bad_names_and_values_are_refused():
    result = synthetic_result()
    with pytest.raises(OutputError, match="subcircuit name"):
        to_spice_subcircuit(result, name="1 bad name")
    negative = synthetic_result("Rs + Ls + C1", {"Rs": 0.1, "Ls": 1e-9, "C1": -1e-9})
    with pytest.raises(OutputError, match="C1"):
        to_spice_subcircuit(negative)


def test_special_cpe_exponents_are_written_exactly():
    # Z = 1/(Q (jw)^n): n = 1 is a capacitor C = Q, n = 0 a resistor 1/Q (common practice, no source)
    for n, element in ((1.0, "C_P1"), (0.0, "R_P1")):
        result = synthetic_result("Rs + P1", {"Rs": 1.0, "P1_Q": 1e-6, "P1_n": n}, fixed=("P1_n",))
        text = to_spice_subcircuit(result)
        names = [line.split()[0] for line in text.splitlines() if line and not line.startswith(("*", "."))]
        assert names == ["Rs", element]
        assert math.isclose(float(text.split(f"\n{element} ")[1].split()[2]), 1e-6 if n == 1 else 1e6)
