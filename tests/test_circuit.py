"""Circuit expressions: grammar, clean syntax errors, and impedance against lcapy and numeric derivatives."""

import numpy as np
import pytest
import sympy

from fitz_tool.circuit import Circuit, Element, Parallel, Series
from fitz_tool.exceptions import ModelSyntaxError

lcapy = pytest.importorskip("lcapy")

FREQ = np.logspace(1, 9, 60)


def lcapy_impedance(network, frequency: np.ndarray) -> np.ndarray:
    """Impedance of an lcapy network at s = j 2 pi f (lcapy symbolic impedance, evaluated with sympy)."""
    expr = network.Z(lcapy.s).sympy
    symbols = list(expr.free_symbols)
    if not symbols:
        return np.full(frequency.shape, complex(expr))
    fn = sympy.lambdify(symbols[0], expr, "numpy")
    return np.asarray(fn(2j * np.pi * frequency), dtype=complex)


def test_parallel_binds_tighter_than_series():
    tree = Circuit.parse("Rs + L1 || Cp").tree
    assert tree == Series((Element("Rs", "R"), Parallel((Element("L1", "L"), Element("Cp", "C")))))


def test_parentheses_group_and_text_round_trips():
    c = Circuit.parse("(Rs+L1)||C_p")
    assert c.tree == Parallel((Series((Element("Rs", "R"), Element("L1", "L"))), Element("C_p", "C")))
    assert c.expression == "(Rs + L1) || C_p"
    assert Circuit.parse(c.expression).tree == c.tree


def test_parameter_names_and_units_include_the_constant_phase_element():
    c = Circuit.parse("Rs + Ls + P1")
    assert c.parameter_names == ("Rs", "Ls", "P1_Q", "P1_n")
    assert [c.parameter_unit(n) for n in c.parameter_names] == ["ohm", "H", "S s^n", ""]
    assert c.parameter_is_exponent("P1_n") and not c.parameter_is_exponent("P1_Q")


@pytest.mark.parametrize(("text", "column", "words"), [
    ("Rs + + L", 6, "expected an element"),
    ("Rs + X1", 6, "unknown element kind 'X'"),
    ("(Rs + L1", 9, "missing ')'"),
    ("Rs + L1)", 8, "unexpected ')'"),
    ("Rs | L1", 4, "use || for parallel"),
    ("Rs + Rs", 6, "appears twice"),
    ("", 1, "empty"),
    ("Rs +", 5, "expression ends"),
])
def test_bad_expressions_raise_with_the_column(text, column, words):
    with pytest.raises(ModelSyntaxError) as info:
        Circuit.parse(text)
    assert info.value.column == column
    assert words in str(info.value)
    assert "\n" not in str(info.value)


def test_known_values_common_practice():
    # Series resonance of R + L + C: Z = R exactly at f0 = 1/(2 pi sqrt(LC)) (common practice, no source).
    c = Circuit.parse("R1 + L1 + C1")
    f0 = 1 / (2 * np.pi * np.sqrt(1e-6 * 1e-9))
    assert c.impedance(np.array([f0]), {"R1": 3.0, "L1": 1e-6, "C1": 1e-9})[0] == pytest.approx(3.0, abs=1e-9)
    # CPE Z = 1/(Q (j w)^n): n = 1 is a capacitor with C = Q, n = 0 a resistor 1/Q
    # (common practice, no source).
    p = Circuit.parse("P1")
    assert np.allclose(p.impedance(FREQ, {"P1_Q": 2e-9, "P1_n": 1.0}), 1 / (2j * np.pi * FREQ * 2e-9))
    assert np.allclose(p.impedance(FREQ, {"P1_Q": 0.01, "P1_n": 0.0}), 100.0)


def test_ideal_elements_and_their_combinations_follow_the_handbook():
    # Z_L = j w L, Z_C = 1/(j w C); series impedances add, parallel admittances add (common practice,
    # no source); so R1 || R2 = R1 R2/(R1 + R2) and C1 + C2 in series is C1 C2/(C1 + C2).
    w = 2 * np.pi * FREQ
    np.testing.assert_allclose(Circuit.parse("L1").impedance(FREQ, {"L1": 3e-6}), 1j * w * 3e-6, rtol=1e-12)
    np.testing.assert_allclose(Circuit.parse("C1").impedance(FREQ, {"C1": 4e-9}), 1 / (1j * w * 4e-9),
                               rtol=1e-12)
    np.testing.assert_allclose(Circuit.parse("R1 || R2").impedance(FREQ, {"R1": 30.0, "R2": 60.0}), 20.0,
                               rtol=1e-12)
    series_c = Circuit.parse("C1 + C2").impedance(FREQ, {"C1": 2e-9, "C2": 6e-9})
    np.testing.assert_allclose(series_c, 1 / (1j * w * 1.5e-9), rtol=1e-12)


def _random_network(rng, depth=0, counter=None):
    """A random expression, the matching lcapy network, and parameter values."""
    counter = counter if counter is not None else [0]
    if depth >= 3 or rng.random() < 0.3 + 0.15 * depth:
        counter[0] += 1
        kind = "RLCP"[rng.integers(4)]
        name = f"{kind}{counter[0]}"
        if kind == "R":
            v = 10 ** rng.uniform(-2, 5)
            return name, lcapy.R(v), {name: v}
        if kind == "L":
            v = 10 ** rng.uniform(-9, -3)
            return name, lcapy.L(v), {name: v}
        if kind == "C":
            v = 10 ** rng.uniform(-12, -5)
            return name, lcapy.C(v), {name: v}
        q, n = 10 ** rng.uniform(-9, -4), round(rng.uniform(0.5, 1.0), 2)
        # lcapy CPE(K, alpha) has impedance 1 / (K s^alpha) (lcapy docs), our P with Q = K, n = alpha.
        return name, lcapy.CPE(q, n), {f"{name}_Q": q, f"{name}_n": n}
    parts = [_random_network(rng, depth + 1, counter) for _ in range(int(rng.integers(2, 4)))]
    values = {k: v for p in parts for k, v in p[2].items()}
    if rng.random() < 0.5:
        net = parts[0][1]
        for p in parts[1:]:
            net = net + p[1]
        return "(" + " + ".join(p[0] for p in parts) + ")", net, values
    net = parts[0][1]
    for p in parts[1:]:
        net = net | p[1]
    return "(" + " || ".join(p[0] for p in parts) + ")", net, values


def test_random_expressions_match_lcapy():
    rng = np.random.default_rng(3)
    for _ in range(25):
        text, network, values = _random_network(rng)
        ours = Circuit.parse(text).impedance(FREQ, values)
        # lcapy symbolic impedance (general-purpose circuit library), evaluated at s = j w.
        np.testing.assert_allclose(ours, lcapy_impedance(network, FREQ), rtol=1e-9, err_msg=text)


def test_gradient_matches_central_differences():
    c = Circuit.parse("(Rs + L1 || Rcore) || Cp + P1")
    values = {"Rs": 0.1, "L1": 2e-6, "Rcore": 500.0, "Cp": 3e-11, "P1_Q": 1e-5, "P1_n": 0.8}
    z, grads = c.impedance_gradient(FREQ, values)
    np.testing.assert_allclose(z, c.impedance(FREQ, values))
    for name, v in values.items():
        h = 1e-6 * v
        up, down = dict(values, **{name: v + h}), dict(values, **{name: v - h})
        numeric = (c.impedance(FREQ, up) - c.impedance(FREQ, down)) / (2 * h)
        # central differences: truncation ~ h^2 and rounding ~ eps |Z| / h, bounded per point
        assert np.all(np.abs(grads[name] - numeric) <= 1e-5 * np.abs(numeric) + 1e-8 * np.abs(z) / v), name


def test_batch_evaluation_equals_one_at_a_time():
    c = Circuit.parse("Rs + Ls + C1 || Rleak")
    rows = np.array([[0.1, 1e-9, 1e-6, 1e4], [1.0, 5e-9, 1e-8, 1e6]])
    batch = c.impedance(FREQ, {n: rows[:, i : i + 1] for i, n in enumerate(c.parameter_names)})
    assert batch.shape == (2, FREQ.size)
    for k in range(2):
        one = dict(zip(c.parameter_names, rows[k], strict=True))
        np.testing.assert_allclose(batch[k], c.impedance(FREQ, one))
