"""Circuits: the element-kind registry, the expression grammar and tree, and their impedance."""

from ..limits import MAX_DEPTH, MAX_ELEMENTS
from .kinds import ELEMENT_KINDS, DataFeatures, ElementKind, ParameterSpec, register_kind, unregister_kind
from .tree import Circuit, Element, Node, Parallel, Series, parse_circuit, unit_of_parameter

__all__ = ["ELEMENT_KINDS", "ElementKind", "ParameterSpec", "DataFeatures", "register_kind",
           "unregister_kind", "Circuit", "Element", "Node", "Series", "Parallel", "parse_circuit",
           "unit_of_parameter", "MAX_ELEMENTS", "MAX_DEPTH"]
