"""Circuit expressions: grammar, the tree and its vectorized complex impedance with exact gradient.

Grammar (``||`` binds tighter than ``+``; parentheses group)::

    series   := parallel ( "+" parallel )*
    parallel := term ( "||" term )*
    term     := NAME | "(" series ")"
    NAME     := kind letter followed by letters, digits or underscores

Kinds and their impedances come from the registry in :mod:`fitz_tool.circuit.kinds`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..exceptions import ModelSyntaxError
from ..limits import MAX_DEPTH, MAX_ELEMENTS
from .kinds import ELEMENT_KINDS, ElementKind

__all__ = ["Element", "Series", "Parallel", "Node", "Circuit", "parse_circuit", "unit_of_parameter"]



@dataclass(frozen=True)
class Element:
    """One two-terminal element; ``kind`` is a letter of the kind registry (``ELEMENT_KINDS``)."""

    name: str
    kind: str

    @property
    def record(self) -> ElementKind:
        return ELEMENT_KINDS[self.kind]

    @property
    def parameters(self) -> tuple[str, ...]:
        return tuple(self.name + spec.suffix for spec in self.record.parameters)


@dataclass(frozen=True)
class Series:
    """Elements or groups in series: Z = sum(Z_i)."""

    children: tuple[Node, ...]


@dataclass(frozen=True)
class Parallel:
    """Elements or groups in parallel: Z = 1 / sum(1 / Z_i)."""

    children: tuple[Node, ...]


Node = Element | Series | Parallel

_TOKEN = re.compile(r"\s*(?:(?P<name>[A-Za-z][A-Za-z0-9_]*)|(?P<op>\|\||\+|\(|\))|(?P<bad>\S))")


def _tokenize(expression: str) -> list[tuple[str, str, int]]:
    tokens = []
    for m in _TOKEN.finditer(expression):
        if m.group("bad") is not None:
            column = m.start("bad") + 1
            char = m.group("bad")
            hint = {"|": " (use || for parallel)", "-": " (use + for series)",
                    "/": " (use || for parallel)"}.get(char, "")
            raise ModelSyntaxError(f"unexpected character {char!r}{hint}", expression, column)
        if m.group("name") is not None:
            tokens.append(("name", m.group("name"), m.start("name") + 1))
        elif m.group("op") is not None:
            tokens.append(("op", m.group("op"), m.start("op") + 1))
    return tokens


class _Parser:
    def __init__(self, expression: str):
        self.expression = expression
        self.tokens = _tokenize(expression)
        self.pos = 0
        self.depth = 0
        names = sum(1 for kind, _, _ in self.tokens if kind == "name")
        if names > MAX_ELEMENTS:
            raise ModelSyntaxError(f"{names} elements: at most {MAX_ELEMENTS} are supported; use a simpler "
                                   "model", self._short(expression), 1)

    @staticmethod
    def _short(expression: str) -> str:
        return expression if len(expression) <= 120 else expression[:117] + "..."

    def error(self, message: str, column: int | None = None):
        if column is None:
            column = self.tokens[self.pos][2] if self.pos < len(self.tokens) else len(self.expression) + 1
        raise ModelSyntaxError(message, self._short(self.expression), column)

    def peek(self) -> str | None:
        return self.tokens[self.pos][1] if self.pos < len(self.tokens) else None

    def series(self) -> Node:
        parts = [self.parallel()]
        while self.peek() == "+":
            self.pos += 1
            parts.append(self.parallel())
        return parts[0] if len(parts) == 1 else Series(tuple(parts))

    def parallel(self) -> Node:
        parts = [self.term()]
        while self.peek() == "||":
            self.pos += 1
            parts.append(self.term())
        return parts[0] if len(parts) == 1 else Parallel(tuple(parts))

    def term(self) -> Node:
        if self.pos >= len(self.tokens):
            self.error("expression ends where an element or '(' was expected")
        kind, text, column = self.tokens[self.pos]
        if kind == "name":
            self.pos += 1
            letter = text[0]
            if letter not in ELEMENT_KINDS:
                known = ", ".join(f"{k} ({v.description})" for k, v in ELEMENT_KINDS.items())
                self.error(f"unknown element kind {letter!r} in {text!r}; names start with {known}", column)
            return Element(text, letter)
        if text == "(":
            self.pos += 1
            self.depth += 1
            if self.depth > MAX_DEPTH:
                self.error(f"parentheses nested deeper than {MAX_DEPTH} levels; flatten the expression",
                           column)
            node = self.series()
            self.depth -= 1
            if self.peek() != ")":
                self.error(f"missing ')' for the '(' opened at column {column}")
            self.pos += 1
            return node
        self.error(f"expected an element or '(' but found {text!r}", column)
        raise AssertionError  # unreachable

    def parse(self) -> Node:
        if not self.tokens:
            raise ModelSyntaxError("empty circuit expression", self.expression, 1)
        node = self.series()
        if self.pos < len(self.tokens):
            self.error(f"unexpected {self.tokens[self.pos][1]!r}")
        return node


def unit_of_parameter(name: str) -> str | None:
    """SI unit of a parameter named as in expressions (``"Cp"`` -> ``"F"``, ``"P1_n"`` -> ``""``), read from
    the kind registry by the name's first letter; None when the letter is no kind."""
    kind = ELEMENT_KINDS.get(name[:1])
    if kind is None:
        return None
    for spec in sorted(kind.parameters, key=lambda s: -len(s.suffix)):
        if name.endswith(spec.suffix) and len(name) > len(spec.suffix):
            return spec.unit
    return None


def parse_circuit(expression: str) -> Node:
    """Parse an expression such as ``"Rs + L1 || Cp"`` into a tree (raises ModelSyntaxError)."""
    return _Parser(expression).parse()


def _elements(node: Node) -> list[Element]:
    if isinstance(node, Element):
        return [node]
    return [e for child in node.children for e in _elements(child)]


def _to_text(node: Node, inside_parallel: bool = False) -> str:
    if isinstance(node, Element):
        return node.name
    if isinstance(node, Series):
        text = " + ".join(_to_text(c) for c in node.children)
        return f"({text})" if inside_parallel else text
    return " || ".join(_to_text(c, inside_parallel=True) for c in node.children)


def _element_impedance(element: Element, omega: np.ndarray, values: Mapping[str, float]):
    """Impedance (ohm) of one element and its derivative with respect to each of its parameters.

    Values may be floats or arrays that broadcast against ``omega`` (e.g. shape (K, 1) against (M,) to
    evaluate K parameter sets at once).
    """
    record = element.record
    own = {spec.suffix: values[element.name + spec.suffix] for spec in record.parameters}
    z, grads = record.impedance(1j * omega, own)
    return z, {element.name + suffix: g for suffix, g in grads.items()}


def _evaluate(node: Node, omega: np.ndarray, values: Mapping[str, float]):
    if isinstance(node, Element):
        return _element_impedance(node, omega, values)
    results = [_evaluate(child, omega, values) for child in node.children]
    if isinstance(node, Series):
        z = sum(r[0] for r in results)
        grads = {k: v for r in results for k, v in r[1].items()}
        return z, grads
    admittance = sum(1.0 / r[0] for r in results)
    z = 1.0 / admittance
    grads = {}
    for zi, gi in results:
        factor = (z / zi) ** 2  # dZ/dZi for Z = 1/sum(1/Zi)
        for k, v in gi.items():
            grads[k] = factor * v
    return z, grads


@dataclass(frozen=True)
class Circuit:
    """A parsed circuit expression.

    Examples
    --------
    >>> c = Circuit.parse("Rs + L1 || Cp")
    >>> c.parameter_names
    ('Rs', 'L1', 'Cp')
    """

    expression: str
    tree: Node

    @classmethod
    def parse(cls, expression: str) -> Circuit:
        tree = parse_circuit(expression)
        names = [e.name for e in _elements(tree)]
        duplicates = sorted({n for n in names if names.count(n) > 1})
        if duplicates:
            # the second whole-name occurrence ("L1" inside "L10" is another name)
            column = [m.start() for m in re.finditer(rf"(?<![A-Za-z0-9_]){re.escape(duplicates[0])}"
                                                        rf"(?![A-Za-z0-9_])", expression)][1] + 1
            raise ModelSyntaxError(f"element {duplicates[0]!r} appears twice", expression, column)
        return cls(_to_text(tree), tree)

    @property
    def elements(self) -> tuple[Element, ...]:
        return tuple(_elements(self.tree))

    @property
    def parameter_names(self) -> tuple[str, ...]:
        return tuple(p for e in self.elements for p in e.parameters)

    def parameter_spec(self, name: str):
        """The registry's ParameterSpec of a parameter (raises KeyError for an unknown name)."""
        e = self.parameter_element(name)
        return next(spec for spec in e.record.parameters if e.name + spec.suffix == name)

    def parameter_unit(self, name: str) -> str:
        """SI unit of a parameter (``"ohm"``, ``"H"``, ``"F"``, ``"S s^n"`` or ``""``)."""
        return self.parameter_spec(name).unit

    def parameter_element(self, name: str) -> Element:
        """The element a parameter belongs to (raises KeyError for an unknown name)."""
        for e in self.elements:
            if name in e.parameters:
                return e
        raise KeyError(name)

    def parameter_is_exponent(self, name: str) -> bool:
        """True for a dimensionless exponent (e.g. a constant phase element's ``NAME_n``), fitted linearly."""
        return self.parameter_spec(name).exponent

    @property
    def notes(self) -> tuple[str, ...]:
        """Readings of element names that may surprise (e.g. ``CPE1`` is a capacitor: it starts with C)."""
        out = []
        for e in self.elements:
            if e.name.upper().startswith("CPE") and e.kind == "C":
                out.append(f"{e.name} is read as a capacitor (its name starts with C); a constant phase "
                           "element's name starts with P")
        return tuple(out)

    def impedance(self, frequency: np.ndarray, values: Mapping[str, float]) -> np.ndarray:
        """Complex impedance in ohm at ``frequency`` (Hz) for parameter ``values`` (SI)."""
        omega = 2 * np.pi * np.asarray(frequency, dtype=float)
        return _evaluate(self.tree, omega, values)[0]

    def impedance_gradient(self, frequency: np.ndarray, values: Mapping[str, float]):
        """Impedance (ohm) and ``{parameter: dZ/dparameter}`` at ``frequency`` (Hz), exact."""
        omega = 2 * np.pi * np.asarray(frequency, dtype=float)
        return _evaluate(self.tree, omega, values)

    def __str__(self) -> str:
        return self.expression
