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


def _loss(values: Mapping[str, np.ndarray]) -> tuple[str, np.ndarray]:
    """The loss reading as ("D", D) or ("Q", Q)."""
    if "dissipation" in values:
        return "D", values["dissipation"]
    return "Q", values["quality"]


def lcr_to_impedance(form: str, values: Mapping[str, np.ndarray]) -> tuple[np.ndarray, list[str]]:
    """Impedance in ohm of an LCR-meter reading pair (see the module table).

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
    w = 2 * np.pi * values["frequency"]
    steps: list[str] = []
    with np.errstate(divide="ignore", invalid="ignore"):
        if form.startswith(("lcr_cs", "lcr_ls")):
            reactive = "c_series" if form.startswith("lcr_cs") else "l_series"
            x = values[reactive]
            if "r_series" in values:
                rs = values["r_series"]
            else:
                name, loss = _loss(values)
                d = loss if name == "D" else 1 / loss
                q = 1 / d
                if reactive == "c_series":
                    rs = d / (w * x)
                    steps.append(f"Rs = D / (w Cs){' with D = 1/Q' if name == 'Q' else ''}")
                else:
                    rs = w * x / q
                    steps.append(f"Rs = w Ls / Q{' with Q = 1/D' if name == 'D' else ''}")
            if reactive == "c_series":
                z = rs + 1 / (1j * w * x)
                steps.append("Z = Rs + 1/(j w Cs) (series equivalent)")
            else:
                z = rs + 1j * w * x
                steps.append("Z = Rs + j w Ls (series equivalent)")
            return z, steps
        reactive = "c_parallel" if form.startswith("lcr_cp") else "l_parallel"
        x = values[reactive]
        if "r_parallel" in values:
            rp = values["r_parallel"]
        else:
            name, loss = _loss(values)
            d = loss if name == "D" else 1 / loss
            q = 1 / d
            if reactive == "c_parallel":
                rp = 1 / (w * x * d)
                steps.append(f"Rp = 1 / (w Cp D){' with D = 1/Q' if name == 'Q' else ''}")
            else:
                rp = q * w * x
                steps.append(f"Rp = Q w Lp{' with Q = 1/D' if name == 'D' else ''}")
        if reactive == "c_parallel":
            y = 1 / rp + 1j * w * x
            steps.append("Z = 1 / (1/Rp + j w Cp) (parallel equivalent)")
        else:
            y = 1 / rp + 1 / (1j * w * x)
            steps.append("Z = 1 / (1/Rp + 1/(j w Lp)) (parallel equivalent)")
        return 1 / y, steps
