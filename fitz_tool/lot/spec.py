"""Spec limits and guard-banded verdicts for one measured quantity of a part.

Syntax (``--spec``, repeatable): ``NAME=NOMINAL+-TOL%`` (also ``NAME=NOMINAL±TOL%``), ``NAME=LOW:HIGH``, or
one-sided ``NAME=LOW:`` / ``NAME=:HIGH``; values take SI prefixes (``L1=22u+-10%``, ``SRF=5M:``). NAME is a
circuit parameter (``L1``), ``SRF`` (the lowest self-resonance inside the sweep), or a design value at a
frequency ``VALUE@FREQ`` with VALUE one of ``L_eff``, ``C_eff``, ``ESR``, ``abs_Z``, ``phase``, ``Q``, ``D``
(``ESR@100k``).

Decision rule (guard-banding against the expanded uncertainty U; guarded acceptance and guarded rejection
as in the decision rules of ILAC-G8, from memory; common practice). U is the value's expanded uncertainty
from the uncertainty budget (:mod:`fitz_tool.budget`, GUM: ``U = k u_c`` with ``k = t_95.45(nu_eff)``,
about 2), or ``COVERAGE_FACTOR`` (2) times the fit's standard error where the budget gives none:

- ``pass``: the whole interval ``[x - U, x + U]`` lies inside the limits;
- ``fail``: the whole interval lies outside a limit (``x + U < LOW`` or ``x - U > HIGH``);
- ``marginal``: a limit lies inside ``[x - U, x + U]``, so the measurement cannot decide; also when the value
  has no uncertainty or is undefined (it cannot be decided either).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from ..exceptions import InputError
from ..units import parse_quantity

__all__ = ["Spec", "parse_spec", "verdict", "combine_verdicts", "COVERAGE_FACTOR", "DESIGN_NAMES",
           "split_design_name"]

#: Coverage factor of the expanded uncertainty used for guard-banding (about 95 % for a normal distribution).
COVERAGE_FACTOR = 2.0
#: Design values that can be asked for at a frequency (``NAME@FREQ``).
DESIGN_NAMES = ("L_eff", "C_eff", "ESR", "abs_Z", "phase", "Q", "D")
_TOLERANCE = re.compile(r"^(?P<nominal>[^+±]+?)\s*(?:\+-|\+/-|±)\s*(?P<tol>[^%]+?)\s*%\s*$")


@dataclass(frozen=True)
class Spec:
    """Limits of one quantity (SI units); ``low`` is -inf or ``high`` +inf for a one-sided limit.

    ``nominal`` is the stated nominal value (NaN for ``LOW:HIGH``); ``text`` the limit as the user wrote it.
    """

    name: str
    low: float
    high: float
    nominal: float
    text: str

    @property
    def column(self) -> str:
        """Table column of this spec's verdict."""
        return f"spec_{self.name}"


def split_design_name(name: str) -> tuple[str, str] | None:
    """``"ESR@100k"`` -> ``("ESR", "100k")``; None for a name without ``@``."""
    if "@" not in name:
        return None
    value, at = (part.strip() for part in name.split("@", 1))
    return value, at


def parse_spec(text: str) -> Spec:
    """Parse one ``--spec`` item (syntax in the module docstring).

    Raises
    ------
    InputError
        The item does not follow the syntax; the message shows the accepted forms.
    """
    forms = "NAME=NOMINAL+-TOL% (or ±), NAME=LOW:HIGH, NAME=LOW: or NAME=:HIGH"
    if "=" not in text:
        raise InputError(f"--spec {text!r}: expected {forms}")
    name, limits = (part.strip() for part in text.split("=", 1))
    if not name:
        raise InputError(f"--spec {text!r}: the name before '=' is missing ({forms})")
    design = split_design_name(name)
    if design is not None:
        value, at = design
        if value not in DESIGN_NAMES:
            raise InputError(f"--spec {text!r}: {value!r} is not a design value; use one of "
                             f"{', '.join(DESIGN_NAMES)} before '@'")
        parse_quantity(at.removesuffix("Hz"), "", f"--spec {name} frequency")
        name = f"{value}@{at.removesuffix('Hz')}"
    what = f"--spec {name}"
    match = _TOLERANCE.match(limits)
    if match:
        nominal = parse_quantity(match["nominal"], "", f"{what} nominal")
        tol = parse_quantity(match["tol"], "", f"{what} tolerance") / 100
        if not tol > 0:
            raise InputError(f"{what}: the tolerance must be above 0 %")
        low, high = sorted((nominal * (1 - tol), nominal * (1 + tol)))
        return Spec(name, low, high, nominal, limits)
    if ":" in limits:
        low_text, high_text = (part.strip() for part in limits.split(":", 1))
        low = parse_quantity(low_text, "", f"{what} low limit") if low_text else -math.inf
        high = parse_quantity(high_text, "", f"{what} high limit") if high_text else math.inf
        if not low < high:
            raise InputError(f"{what}: the low limit must be below the high limit")
        return Spec(name, low, high, math.nan, limits)
    raise InputError(f"--spec {text!r}: expected {forms}")


def verdict(spec: Spec, value: float | None, expanded: float | None) -> str:
    """``pass``, ``fail`` or ``marginal`` for a value (SI) with expanded uncertainty ``expanded`` (SI, the
    half-width U; rule above)."""
    if value is None or not math.isfinite(value):
        return "marginal"
    if expanded is None or not math.isfinite(expanded):
        return "marginal"
    if value + expanded < spec.low or value - expanded > spec.high:
        return "fail"
    if spec.low <= value - expanded and value + expanded <= spec.high:
        return "pass"
    return "marginal"


def combine_verdicts(verdicts: list[str]) -> str:
    """One verdict for a part: any ``fail`` fails it, else any ``marginal`` makes it marginal, else pass."""
    if "fail" in verdicts:
        return "fail"
    if "marginal" in verdicts:
        return "marginal"
    return "pass"
