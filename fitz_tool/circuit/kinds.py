"""The element-kind registry: one record per kind of two-terminal element, read by every other module.

A kind record holds everything the tool knows about that kind (e^{+jwt} convention, common practice):
its letter in circuit expressions, its parameters and SI units, its impedance and exact parameter gradient,
how its parameters scale with frequency (for dZ/df by Euler's relation), which data scale bounds its search
range, its seed rule from the data, and its SPICE form. Adding a kind means one :func:`register_kind` call
(here for the built-in kinds) and one test file; nothing else changes.

=====  ======================  ==========================  ======================
kind   element                 impedance                   parameters (SI)
=====  ======================  ==========================  ======================
R      resistor                R                           NAME [ohm]
L      inductor                j w L                       NAME [H]
C      capacitor               1 / (j w C)                 NAME [F]
P      constant phase element  1 / (Q (j w)^n)             NAME_Q [S s^n], NAME_n [1]
=====  ======================  ==========================  ======================

The constant phase element is the published definition Z = 1/(Q (jw)^n), 0 < n <= 1; n = 1 is a capacitor
C = Q, n = 0 a resistor 1/Q. Its letter in fitz_tool is ``P`` (for power-law).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

__all__ = ["ParameterSpec", "DataFeatures", "ElementKind", "ELEMENT_KINDS", "register_kind",
           "unregister_kind", "EXPONENT_RANGE"]

#: Range of a constant phase element's exponent searched (its definition allows 0 < n <= 1).
EXPONENT_RANGE = (0.3, 1.0)

Values = Mapping[str, float | np.ndarray]  # parameter suffix -> SI value (float, or array for batches)


@dataclass(frozen=True)
class ParameterSpec:
    """One parameter of a kind: ``suffix`` appended to the element name ("" for the name itself), SI
    ``unit``, and ``exponent`` True for a dimensionless exponent fitted linearly within ``bounds``
    (other parameters are positive and fitted as log10 of their SI value)."""

    suffix: str
    unit: str
    exponent: bool = False
    bounds: tuple[float, float] = (0.0, np.inf)


@dataclass(frozen=True)
class DataFeatures:
    """What seed and range rules read off a measurement (SI: rad/s, ohm)."""

    omega: np.ndarray
    impedance: np.ndarray

    @property
    def magnitude(self) -> np.ndarray:
        return np.abs(self.impedance)

    @property
    def reactance(self) -> np.ndarray:
        return self.impedance.imag

    @property
    def resistance_range(self) -> tuple[float, float]:
        """Smallest and largest positive Re Z (ohm); fallbacks from |Z| when Re Z is never positive."""
        positive = self.impedance.real[self.impedance.real > 0]
        if positive.size:
            return float(positive.min()), float(positive.max())
        return 1e-3 * float(self.magnitude.min()), float(self.magnitude.max())


#: seed(features, shunt, share) -> {suffix: SI value}; NaN asks seeding to complete it from a resonance.
SeedRule = Callable[[DataFeatures, bool, int], dict[str, float]]
#: impedance(jw, values) -> (Z ohm, {suffix: dZ/dparameter}); values broadcast against jw.
ImpedanceRule = Callable[[np.ndarray, Values], tuple[np.ndarray, dict[str, np.ndarray]]]


@dataclass(frozen=True)
class ElementKind:
    """One kind of element (see the module docstring).

    Attributes
    ----------
    letter : str
        First letter of element names of this kind in expressions.
    description, formula : str
        Plain name and impedance formula, for listings.
    parameters : tuple of ParameterSpec
        Its parameters (an element ``L1`` of a kind with suffixes ``("",)`` has the parameter ``L1``).
    impedance : ImpedanceRule
        Impedance and exact gradient.
    frequency_weights : callable
        ``values -> {suffix: weight}`` with ``w dZ/dw = sum weight * p * dZ/dp`` (Euler's relation for
        impedances that depend on w only through products such as w L, w C, w^n Q).
    search_scale : callable
        ``features -> {suffix: (low, high)}``: the range of each parameter seen in the data (SI); the
        search box widens it by some decades, except for exponents, whose range is searched as it is.
    seed : SeedRule
        Starting values from the data, given whether the element sits in a shunt (parallel) position and how
        many elements of its kind share that position.
    shunt_only_in_parallel : bool
        True when the seed's "shunt position" means a direct child of a parallel group (a loss resistor),
        False when it means anywhere inside one (a reactance in a resonator).
    reactance_sign : int
        +1 for an inductive kind, -1 for a capacitive one, 0 otherwise: pairs of opposite sign can be
        completed from a resonance w0^2 = 1/(L C).
    spice : callable or None
        ``(writer, name, values, node_a, node_b) -> None`` writes the element into a SPICE subcircuit
        (see :mod:`fitz_tool.outputs.spice`); None when it has no SPICE form (export refused, with a message).
    """

    letter: str
    description: str
    formula: str
    parameters: tuple[ParameterSpec, ...]
    impedance: ImpedanceRule
    frequency_weights: Callable[[Values], dict[str, float]]
    search_scale: Callable[[DataFeatures], dict[str, tuple[float, float]]]
    seed: SeedRule
    shunt_only_in_parallel: bool = False
    reactance_sign: int = 0
    spice: Callable | None = None


ELEMENT_KINDS: dict[str, ElementKind] = {}


def register_kind(kind: ElementKind) -> ElementKind:
    """Add a kind to the registry (its letter must be one upper-case letter not yet taken)."""
    if not (len(kind.letter) == 1 and kind.letter.isalpha() and kind.letter.isupper()):
        raise ValueError(f"kind letter {kind.letter!r}: use one upper-case letter")
    if kind.letter in ELEMENT_KINDS:
        raise ValueError(f"kind letter {kind.letter!r} is already registered")
    ELEMENT_KINDS[kind.letter] = kind
    return kind


def unregister_kind(letter: str) -> None:
    """Remove a kind (for tests that register their own)."""
    ELEMENT_KINDS.pop(letter, None)


# --- the built-in kinds -------------------------------------------------------------------------------------

def _resistor(jw: np.ndarray, v: Values):
    r = v[""]
    ones = np.ones_like(jw) * np.ones_like(r)  # broadcasts when values are arrays (batch evaluation)
    return r * ones, {"": ones}


def _inductor(jw: np.ndarray, v: Values):
    return jw * v[""], {"": jw * np.ones_like(v[""])}


def _capacitor(jw: np.ndarray, v: Values):
    c = v[""]
    z = 1.0 / (jw * c)
    return z, {"": -z / c}


def _constant_phase(jw: np.ndarray, v: Values):
    q, n = v["_Q"], v["_n"]
    z = 1.0 / (q * jw**n)
    return z, {"_Q": -z / q, "_n": -z * np.log(jw)}


def _seed_resistor(d: DataFeatures, shunt: bool, share: int) -> dict[str, float]:
    small, large = d.resistance_range
    return {"": (large if shunt else small) / share}


def _seed_inductor(d: DataFeatures, shunt: bool, share: int) -> dict[str, float]:
    inductive = np.flatnonzero(d.reactance > 0)
    if not inductive.size:
        return {"": np.nan}
    # low-frequency asymptote in a shunt, high-frequency one in series
    i = inductive[0] if shunt else inductive[-1]
    return {"": float(d.reactance[i] / d.omega[i] / share)}


def _seed_capacitor(d: DataFeatures, shunt: bool, share: int) -> dict[str, float]:
    capacitive = np.flatnonzero(d.reactance < 0)
    if not capacitive.size:
        return {"": np.nan}
    i = capacitive[-1] if shunt else capacitive[0]
    return {"": float(-share / (d.omega[i] * d.reactance[i]))}


def _power_law_exponent(d: DataFeatures, at_low_end: bool) -> float:
    """-d ln|Z| / d ln w over the first (or last) fifth of the sweep, clipped to EXPONENT_RANGE."""
    k = max(2, d.omega.size // 5)
    sl = slice(0, k) if at_low_end else slice(-k, None)
    if d.omega.size < 2:
        return 1.0
    slope = np.polyfit(np.log(d.omega[sl]), np.log(d.magnitude[sl]), 1)[0]
    return float(np.clip(-slope, *EXPONENT_RANGE))


def _seed_constant_phase(d: DataFeatures, shunt: bool, share: int) -> dict[str, float]:
    n = _power_law_exponent(d, at_low_end=not shunt)
    i = -1 if shunt else 0
    return {"_n": n, "_Q": float(1 / (d.magnitude[i] * d.omega[i] ** n))}


def _scale(values: np.ndarray) -> tuple[float, float]:
    return float(values.min()), float(values.max())


def _spice_plain(letter: str):
    def write(writer, name: str, values: Values, a: str, b: str) -> None:
        writer.add(letter, name, a, b, float(values[""]), name)
    return write


def _spice_constant_phase(writer, name: str, values: Values, a: str, b: str) -> None:
    from ..outputs.spice import write_constant_phase  # the Foster network lives with the netlist writer

    write_constant_phase(writer, name, float(values["_Q"]), float(values["_n"]), a, b)


register_kind(ElementKind(
    "R", "resistor", "R", (ParameterSpec("", "ohm"),), _resistor, lambda v: {},
    lambda d: {"": _scale(d.magnitude)}, _seed_resistor, True, 0, _spice_plain("R")))
register_kind(ElementKind(
    "L", "inductor", "j w L", (ParameterSpec("", "H"),), _inductor, lambda v: {"": 1.0},
    lambda d: {"": _scale(d.magnitude / d.omega)}, _seed_inductor, False, +1, _spice_plain("L")))
register_kind(ElementKind(
    "C", "capacitor", "1 / (j w C)", (ParameterSpec("", "F"),), _capacitor, lambda v: {"": 1.0},
    lambda d: {"": _scale(1 / (d.omega * d.magnitude))}, _seed_capacitor, False, -1, _spice_plain("C")))
register_kind(ElementKind(
    "P", "constant phase element", "1 / (Q (j w)^n)",
    (ParameterSpec("_Q", "S s^n"), ParameterSpec("_n", "", exponent=True, bounds=(1e-3, 1.0))),
    _constant_phase, lambda v: {"_Q": float(v["_n"])},
    lambda d: {"_Q": _scale(np.concatenate([1 / (d.magnitude * d.omega**n) for n in EXPONENT_RANGE])),
               "_n": EXPONENT_RANGE},
    _seed_constant_phase, False, 0, _spice_constant_phase))
