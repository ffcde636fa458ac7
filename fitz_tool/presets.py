"""Named starting topologies for common passive parts, each just a circuit expression.

Names are plain descriptive words (list them with ``fitz-tool models``). Element names follow the trade
(``Rs`` series resistance / ESR, ``Ls`` lead or series inductance / ESL, ``Cp`` parallel winding capacitance,
``Rcore`` core loss, ``Rleak`` leakage); any expression accepted by :class:`fitz_tool.circuit.Circuit` can be
used instead of a preset.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass

from .circuit import Circuit
from .exceptions import ModelSyntaxError

__all__ = ["Preset", "PRESETS", "resolve_model", "default_candidates", "topology"]


@dataclass(frozen=True)
class Preset:
    """A named topology: the circuit ``expression`` and a one-line ``description`` for engineers."""

    expression: str
    description: str


PRESETS: dict[str, Preset] = {
    "inductor-winding-resistance": Preset("Rs + L1", "inductor with winding resistance (plain series RL)"),
    "inductor-winding-capacitance": Preset(
        "(Rs + L1) || Cp", "inductor with winding resistance and capacitance between turns"),
    "inductor-winding-core": Preset(
        "(Rs + L1 || Rcore) || Cp", "inductor with winding resistance, winding capacitance and core loss"),
    "capacitor-series-resistance": Preset("Rs + C1", "capacitor with ESR (plain series RC)"),
    "capacitor-esr-esl": Preset("Rs + Ls + C1", "capacitor with ESR and ESL (series RLC)"),
    "capacitor-parallel-resistance": Preset("Rp || C1", "capacitor with a parallel resistance (parallel RC)"),
    "leaky-capacitor": Preset("Rs + C1 || Rleak", "capacitor with ESR and leakage resistance"),
    "leaky-capacitor-esl": Preset("Rs + Ls + C1 || Rleak", "capacitor with ESR, ESL and leakage resistance"),
    "dispersive-capacitor": Preset(
        "Rs + Ls + P1", "capacitor whose dielectric follows a power law (constant phase element P1)"),
    "resistor": Preset("R1", "ideal resistor"),
    "resistor-lead-inductance": Preset("R1 + Ls", "resistor with lead inductance"),
    "resistor-lead-inductance-shunt-capacitance": Preset(
        "(R1 + Ls) || Cp", "resistor with lead inductance and capacitance across its body"),
    "ferrite-bead": Preset(
        "Rdc + Lb || Rb || Cb", "ferrite bead: DC resistance, then ferrite inductance, loss and capacitance"),
}


def topology(expression: str) -> str:
    """The expression with every element name replaced by its kind letter (``"Rs + L1"`` -> ``"R + L"``)."""
    return re.sub(r"[A-Za-z][A-Za-z0-9_]*", lambda m: m.group(0)[0], Circuit.parse(expression).expression)


def default_candidates() -> tuple[str, ...]:
    """Expressions tried by an automatic model choice: the presets in listed order, one per topology."""
    seen: dict[str, str] = {}
    for preset in PRESETS.values():
        seen.setdefault(topology(preset.expression), preset.expression)
    return tuple(seen.values())


_LOOKS_LIKE_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9]*(?:-[A-Za-z0-9]+)+$")


def resolve_model(text: str) -> str:
    """A preset name -> its expression; anything else is parsed as an expression and returned normalized.

    Raises
    ------
    ModelSyntaxError
        For an unknown preset name (with the closest names) or an expression that does not parse.
    """
    key = text.strip()
    preset = PRESETS.get(key) or PRESETS.get(key.lower())
    if preset is not None:
        return preset.expression
    if _LOOKS_LIKE_NAME.match(key):
        close = difflib.get_close_matches(key.lower(), list(PRESETS), n=3)
        hint = f"; did you mean {', '.join(close)}?" if close else "; 'fitz-tool models' lists them"
        raise ModelSyntaxError(f"unknown preset {key!r}{hint}")
    return Circuit.parse(key).expression
