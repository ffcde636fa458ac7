"""Circuits: the element-kind registry, the expression grammar and tree, and their impedance."""

from .kinds import ELEMENT_KINDS, DataFeatures, ElementKind, ParameterSpec, register_kind, unregister_kind
from .tree import MAX_DEPTH, MAX_ELEMENTS, Circuit, Element, Node, Parallel, Series, parse_circuit

__all__ = ["ELEMENT_KINDS", "ElementKind", "ParameterSpec", "DataFeatures", "register_kind",
           "unregister_kind", "Circuit", "Element", "Node", "Series", "Parallel", "parse_circuit",
           "MAX_ELEMENTS", "MAX_DEPTH"]
