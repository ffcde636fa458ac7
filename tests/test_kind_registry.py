"""The element-kind registry drives grammar, impedance, fitting, design values and SPICE export."""

import numpy as np
import pytest

from fitz_tool.circuit import (
    ELEMENT_KINDS,
    Circuit,
    ElementKind,
    ParameterSpec,
    register_kind,
    unregister_kind,
)
from fitz_tool.derived import design_values
from fitz_tool.exceptions import ModelSyntaxError
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement
from fitz_tool.outputs.spice import to_spice_subcircuit


def _conductance(jw, v):
    g = v[""]
    ones = np.ones_like(jw) * np.ones_like(g)
    return ones / g, {"": -ones / g**2}


def _seed_conductance(d, shunt, share):
    small, large = d.resistance_range
    return {"": share / (large if shunt else small)}


def _spice_conductance(writer, name, values, a, b):
    writer.add("R", "R" + name, a, b, 1.0 / float(values[""]), name)


@pytest.fixture
def conductance_kind():
    """A conductance element G (Z = 1/G, siemens), added only through the registry."""
    kind = register_kind(ElementKind(
        "G", "conductance", "1 / G", (ParameterSpec("", "S"),), _conductance, lambda v: {},
        lambda d: {"": (1 / d.magnitude.max(), 1 / d.magnitude.min())}, _seed_conductance, True, 0,
        _spice_conductance))
    yield kind
    unregister_kind("G")


def test_a_kind_added_through_the_registry_works_end_to_end(conductance_kind):
    # A 0.5 S conductance (2 ohm, Ohm's law: common practice, no source) in series with 10 uH.
    f = np.geomspace(1e3, 1e7, 60)
    z = 2.0 + 1j * 2 * np.pi * f * 10e-6
    m = Measurement(frequency=f, impedance=z)
    circuit = Circuit.parse("G1 + L1")
    assert circuit.parameter_unit("G1") == "S"
    np.testing.assert_allclose(circuit.impedance(f, {"G1": 0.5, "L1": 10e-6}), z, rtol=1e-14)
    result = fit(m, circuit)
    assert result.parameters["G1"].value == pytest.approx(0.5, rel=1e-9)
    assert result.parameters["L1"].value == pytest.approx(10e-6, rel=1e-9)
    point = design_values(result, [100e3]).points[0]
    assert point.values["ESR"].value == pytest.approx(2.0, rel=1e-9)
    assert point.values["L_eff"].value == pytest.approx(10e-6, rel=1e-9)
    netlist = to_spice_subcircuit(result)
    line = next(s for s in netlist.splitlines() if s.startswith("RG1 "))
    assert float(line.split()[-1]) == pytest.approx(2.0, rel=1e-9)


def test_a_kind_without_spice_form_is_refused_on_export(conductance_kind):
    from dataclasses import replace

    from fitz_tool.exceptions import OutputError

    ELEMENT_KINDS["G"] = replace(conductance_kind, spice=None)
    f = np.geomspace(1e3, 1e6, 30)
    m = Measurement(frequency=f, impedance=np.full(f.size, 4.0 + 0j))
    result = fit(m, "G1")
    with pytest.raises(OutputError, match="no SPICE form"):
        to_spice_subcircuit(result)


def test_unknown_kinds_and_letters_are_errors():
    with pytest.raises(ModelSyntaxError, match="unknown element kind 'G'"):
        Circuit.parse("G1 + L1")
    with pytest.raises(ValueError, match="already registered"):
        register_kind(ELEMENT_KINDS["R"])


def test_expression_hints_and_limits():
    with pytest.raises(ModelSyntaxError, match=r"use \+ for series"):
        Circuit.parse("R1 - L1")
    with pytest.raises(ModelSyntaxError, match="nested deeper"):
        Circuit.parse("(" * 30 + "R1" + ")" * 30)
    with pytest.raises(ModelSyntaxError, match="at most"):
        Circuit.parse(" + ".join(f"R{k}" for k in range(100)))
    assert "read as a capacitor" in Circuit.parse("Rs + CPE1").notes[0]
