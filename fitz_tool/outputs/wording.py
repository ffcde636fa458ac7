"""Plain words for what the user reads: how the data was read, what the optimiser said, how good the fit is.

The words for what was read come from their one home beside the table of input forms
(``readers.forms.form_words``, Touchstone and in-code forms included); the optimiser's own messages are
translated into sentences; the fit quality is told as the residual scatter (noise not stated) or as chi-square
with its p-value (noise stated, absolute weights).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..measurement import Measurement
from ..readers.forms import form_words
from ..results import FitResult

__all__ = ["describe_form", "plain_message", "FitQuality", "fit_quality", "verdict"]


def describe_form(measurement: Measurement) -> str:
    """What was read, in words: the reader's own ``description`` in the provenance when present, else the
    words of the recorded form from their one home, ``readers.forms.form_words``."""
    prov = measurement.provenance
    own = getattr(prov, "description", "")
    if own:
        return str(own)
    form = prov.form or ""
    return form_words(form) or (form.replace("_", " ") if form else "impedance data")


#: Raw optimiser texts (scipy / lmfit) -> plain words. Matched as substrings, longest first.
_MESSAGES: dict[str, str] = {
    "Both `ftol` and `xtol` termination conditions are satisfied.":
        "converged: chi-square and the parameters stopped changing",
    "`ftol` termination condition is satisfied.": "converged: chi-square stopped improving",
    "`xtol` termination condition is satisfied.": "converged: the parameters stopped moving",
    "`gtol` termination condition is satisfied.": "converged: chi-square is flat at the solution",
    "The maximum number of function evaluations is exceeded.":
        "stopped at the evaluation limit before converging",
    "Fit succeeded.": "converged",
    "Fit aborted": "stopped early",
    "Tolerance seems to be too small.": "stopped: the tolerance asked for cannot be reached",
    "Improper input parameters.": "could not start: the starting values or bounds are not usable",
}


def plain_message(text: str) -> str:
    """The optimiser's own wording replaced by plain words, e.g. ``"`gtol` termination condition is
    satisfied. (from the data-derived seed, 7 evaluations)"`` -> ``"converged: chi-square is flat at the
    solution (from the data-derived seed, 7 evaluations)"``. Text it does not know is kept."""
    for raw in sorted(_MESSAGES, key=len, reverse=True):
        if raw in text:
            text = text.replace(raw, _MESSAGES[raw])
    return text.replace(": (", " (").strip()


@dataclass(frozen=True)
class FitQuality:
    """How well the model follows the data, in the terms the situation allows.

    Attributes
    ----------
    scatter_abs : float
        RMS of the relative |Z| residual, ln|Z_meas| - ln|Z_model| (dimensionless; 0.0021 is 0.21 %).
    scatter_phase_deg : float
        RMS of the phase residual (deg).
    stated_noise : bool
        True when the measurement carries absolute per-point sigmas, so chi-square tests the model.
    chi_square, degrees_of_freedom : float, int
        As in the fit.
    p_value : float or None
        Probability of a chi-square at least this large if the model is right and the stated noise true
        (upper tail of the chi-square distribution); None without stated noise.
    """

    scatter_abs: float
    scatter_phase_deg: float
    stated_noise: bool
    chi_square: float
    degrees_of_freedom: int
    p_value: float | None


def fit_quality(result: FitResult) -> FitQuality:
    """Residual scatter of a fit, and chi-square's p-value when the noise was stated (absolute sigmas)."""
    residual = result.log_residuals()
    m = result.measurement
    stated = bool(m.sigma_absolute and m.sigma_lnmag is not None and m.sigma_phase is not None)
    dof = int(result.degrees_of_freedom)
    p_value = None
    if stated and dof > 0 and math.isfinite(result.chi_square):
        from scipy.stats import chi2  # only here: scipy.stats is slow to import

        p_value = float(chi2.sf(result.chi_square, dof))  # upper tail (common practice, no source)
    return FitQuality(scatter_abs=float(np.sqrt(np.mean(residual.real**2))),
                      scatter_phase_deg=float(np.degrees(np.sqrt(np.mean(residual.imag**2)))),
                      stated_noise=stated, chi_square=float(result.chi_square), degrees_of_freedom=dof,
                      p_value=p_value)


def format_p_value(p: float) -> str:
    """A p-value to two significant digits; below 1e-4 as ``"< 0.0001"``."""
    return "< 0.0001" if p < 1e-4 else f"{p:.2g}"


def two_digits(value: float) -> str:
    """Two significant digits, trailing zero kept: 0.1003 -> ``"0.10"``, 12.3 -> ``"12"``.
    """
    if not math.isfinite(value):
        return str(value)
    text = f"{value:#.2g}"
    return text[:-1] if text.endswith(".") else text


def scatter_words(quality: FitQuality) -> str:
    """``"residual scatter 0.21 % of |Z|, 0.12 deg (RMS)"``."""
    return (f"residual scatter {two_digits(100 * quality.scatter_abs)} % of |Z|, "
            f"{two_digits(quality.scatter_phase_deg)} deg (RMS)")


def quality_sentence(quality: FitQuality) -> str:
    """One sentence on the fit quality: the chi-square test with stated noise, else the scatter."""
    if quality.stated_noise and quality.p_value is not None:
        judged = ("consistent with the stated noise" if quality.p_value >= 0.01 else
                  "larger than the stated noise allows (model or noise figure wrong)")
        return (f"chi-square {quality.chi_square:.4g} for {quality.degrees_of_freedom} degrees of freedom, "
                f"p = {format_p_value(quality.p_value)}: {judged}")
    return scatter_words(quality) + "; noise not stated, so this scatter is the noise estimate"


def verdict(result: FitResult) -> str:
    """One line: did the fit work and can its values be used."""
    if not result.success:
        return "the fit did NOT converge: do not use these values"
    quality = fit_quality(result)
    flags = len(result.flags)
    flag_words = "no flags" if not flags else f"{flags} flag{'s' if flags > 1 else ''} (read them below)"
    if quality.stated_noise and quality.p_value is not None and quality.p_value < 0.01:
        return f"converged, but the residuals exceed the stated noise; {flag_words}"
    return f"converged; {scatter_words(quality)}; {flag_words}"
