"""LCR-meter readings as equivalent-circuit pairs (Cs-Rs, Ls-Q, Cp-D, ...) turned into impedance.

An LCR meter reports the part as a two-element equivalent at each frequency: a series (``s``) or parallel
(``p``) capacitance or inductance with a resistance, a dissipation factor D or a quality factor Q. The
handbook relations (common practice, no source), w = 2 pi f:

====================  ==========================================  ========================================
reading               impedance / admittance                      loss in words
====================  ==========================================  ========================================
Cs with Rs, D or Q    Z = Rs + 1 / (j w Cs)                       D = Rs w Cs = 1/Q
Ls with Rs, D or Q    Z = Rs + j w Ls                             Q = w Ls / Rs = 1/D
Cp with Rp, D or Q    Y = 1/Rp + j w Cp, Z = 1/Y                  D = 1 / (w Cp Rp) = 1/Q
Lp with Rp, D or Q    Y = 1/Rp + 1 / (j w Lp), Z = 1/Y            Q = Rp / (w Lp) = 1/D
====================  ==========================================  ========================================

A negative Cs or Ls (a meter held in C mode on an inductive part, or the reverse) is used as it is: the
relations still give the impedance the meter measured. The conversions are exact and point-by-point.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

__all__ = ["LCR_FORMS", "lcr_to_impedance"]

#: Forms (roles each needs), tried after the impedance and phasor forms.
LCR_FORMS: dict[str, tuple[str, ...]] = {
    "lcr_cs_rs": ("frequency", "c_series", "r_series"),
    "lcr_cs_d": ("frequency", "c_series", "dissipation"),
    "lcr_cs_q": ("frequency", "c_series", "quality"),
    "lcr_ls_rs": ("frequency", "l_series", "r_series"),
    "lcr_ls_q": ("frequency", "l_series", "quality"),
    "lcr_ls_d": ("frequency", "l_series", "dissipation"),
    "lcr_cp_rp": ("frequency", "c_parallel", "r_parallel"),
    "lcr_cp_d": ("frequency", "c_parallel", "dissipation"),
    "lcr_cp_q": ("frequency", "c_parallel", "quality"),
    "lcr_lp_rp": ("frequency", "l_parallel", "r_parallel"),
    "lcr_lp_q": ("frequency", "l_parallel", "quality"),
    "lcr_lp_d": ("frequency", "l_parallel", "dissipation"),
}


#: kind -> (role of the reactive reading, its part in words)
_REACTIVE: dict[str, tuple[str, str]] = {
    "cs": ("c_series", "X = 1/(j w Cs)"),
    "ls": ("l_series", "X = j w Ls"),
    "cp": ("c_parallel", "B = j w Cp"),
    "lp": ("l_parallel", "B = 1/(j w Lp)"),
}


def lcr_to_impedance(form: str, values: Mapping[str, np.ndarray]) -> tuple[np.ndarray, list[str]]:
    """Impedance in ohm of an LCR-meter reading pair (see the module table).

    A series pair is ``Z = Rs + X`` with the reactive impedance X; a parallel pair ``Y = 1/Rp + B`` with the
    reactive admittance B. A loss given as D (or Q = 1/D) sets the resistive part to ``D |X|`` (series) or
    ``D |B|`` (parallel), signed with the reading, which is the table's relations written once for all four
    kinds.

    Parameters
    ----------
    form : str
        A key of ``LCR_FORMS``.
    values : mapping of str to ndarray
        ``frequency`` in Hz and the form's readings in SI: ``c_series``/``c_parallel`` in F,
        ``l_series``/``l_parallel`` in H, ``r_series``/``r_parallel`` in ohm, ``dissipation`` and
        ``quality`` dimensionless.

    Returns
    -------
    impedance : ndarray of complex
        Z in ohm (non-finite where a reading of 0 makes it undefined; the caller drops those rows).
    steps : list of str
        The relations used, in words.
    """
    kind = form[len("lcr_"):len("lcr_") + 2]
    role, part_text = _REACTIVE[kind]
    series = kind.endswith("s")
    w = 2 * np.pi * values["frequency"]
    x = values[role]
    with np.errstate(divide="ignore", invalid="ignore"):
        part = 1j * w * x if kind in ("ls", "cp") else 1 / (1j * w * x)
        if "r_series" in values or "r_parallel" in values:
            resistive = values["r_series"] if series else 1 / values["r_parallel"]
            steps = []
        else:
            d = values["dissipation"] if "dissipation" in values else 1 / values["quality"]
            # meters sign D and Q with the reading (D = Rs w Cs, Q = w Ls / Rs), so a negative Cs or Ls
            # comes with a negative D or Q and the resistance stays as measured
            resistive = d * np.abs(part) * np.sign(x)
            given = "D" if "dissipation" in values else "Q (D = 1/Q)"
            steps = [f"{'Rs = D |X|' if series else '1/Rp = D |B|'} from {given}"]
        if series:
            steps.append(f"Z = Rs + X with {part_text} (series equivalent)")
            return resistive + part, steps
        steps.append(f"Z = 1 / (1/Rp + B) with {part_text} (parallel equivalent)")
        return 1 / (resistive + part), steps
