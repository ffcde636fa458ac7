"""Named starting topologies: plain names, each a valid expression whose impedance lcapy agrees with."""

import re

import numpy as np
import pytest
import sympy

from fitz_tool.circuit import Circuit
from fitz_tool.exceptions import ModelSyntaxError
from fitz_tool.presets import PRESETS, default_candidates, resolve_model, topology

lcapy = pytest.importorskip("lcapy")

FREQ = np.logspace(1, 9, 80)


def lcapy_network(circuit: Circuit, values: dict):
    """Build the same network from lcapy components (R, L, C, CPE with impedance 1 / (K s^alpha))."""
    from fitz_tool.circuit import Element, Series

    def build(node):
        if isinstance(node, Element):
            if node.kind == "P":
                return lcapy.CPE(values[node.name + "_Q"], values[node.name + "_n"])
            return {"R": lcapy.R, "L": lcapy.L, "C": lcapy.C}[node.kind](values[node.name])
        parts = [build(child) for child in node.children]
        net = parts[0]
        for p in parts[1:]:
            net = net + p if isinstance(node, Series) else net | p
        return net

    return build(circuit.tree)


def typical_values(circuit: Circuit) -> dict[str, float]:
    rng = np.random.default_rng(5)
    span = {"R": (-2, 4), "L": (-9, -4), "C": (-12, -6)}
    values = {}
    for e in circuit.elements:
        if e.kind == "P":
            values[e.name + "_Q"], values[e.name + "_n"] = 10 ** rng.uniform(-8, -4), 0.75
        else:
            values[e.name] = 10 ** rng.uniform(*span[e.kind])
    return values


def test_names_are_plain_words_not_letter_codes():
    for name, preset in PRESETS.items():
        words = name.split("-")
        assert all(re.fullmatch(r"[a-z]{3,}", w) for w in words), name
        assert preset.description and preset.description[0].islower()


@pytest.mark.parametrize("name", list(PRESETS))
def test_every_preset_matches_lcapy(name):
    circuit = Circuit.parse(PRESETS[name].expression)
    values = typical_values(circuit)
    expr = lcapy_network(circuit, values).Z(lcapy.s).sympy
    symbols = list(expr.free_symbols)
    # lcapy symbolic impedance (general-purpose circuit library), evaluated at s = j 2 pi f.
    if symbols:
        reference = np.asarray(sympy.lambdify(symbols[0], expr, "numpy")(2j * np.pi * FREQ), dtype=complex)
    else:
        reference = np.full(FREQ.shape, complex(expr))
    np.testing.assert_allclose(circuit.impedance(FREQ, values), reference, rtol=1e-9)


def test_resolve_model_maps_names_and_normalizes_expressions():
    assert resolve_model("capacitor-esr-esl") == "Rs + Ls + C1"
    assert resolve_model("  Inductor-Winding-Core ") == PRESETS["inductor-winding-core"].expression
    assert resolve_model("Rs+L1||Cp") == "Rs + L1 || Cp"


def test_unknown_preset_suggests_close_names():
    with pytest.raises(ModelSyntaxError, match="did you mean capacitor-esr-esl"):
        resolve_model("capacitor-esr-els")


def test_bad_expression_is_a_syntax_error():
    with pytest.raises(ModelSyntaxError, match="column 6"):
        resolve_model("Rs + + L")


def test_default_candidates_have_one_expression_per_topology():
    candidates = default_candidates()
    assert len({topology(c) for c in candidates}) == len(candidates)
    assert {topology(p.expression) for p in PRESETS.values()} == {topology(c) for c in candidates}
    assert topology("(Rs + L1 || Rcore) || Cp") == "(R + L || R) || C"
