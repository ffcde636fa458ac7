"""Plain result objects passed from the fitter to design values and outputs (all values SI)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .circuit import Circuit
from .measurement import Measurement

__all__ = ["ParameterEstimate", "FitResult", "RankedModel", "ModelSelection"]


@dataclass(frozen=True)
class ParameterEstimate:
    """One fitted (or fixed) circuit parameter.

    Attributes
    ----------
    name : str
        Parameter name (the element name, or ``NAME_Q`` / ``NAME_n`` for a constant phase element).
    value : float
        Best estimate in SI units (ohm, H, F, S s^n, 1).
    stderr : float or None
        Standard error in SI units; None when it could not be computed (``stderr_note`` says why).
    unit : str
        SI unit for display.
    vary : bool
        False when the user fixed it.
    at_bound : str or None
        ``"lower"`` or ``"upper"`` when the estimate sits at a bound.
    stderr_note : str
        Why ``stderr`` is None (e.g. "fixed by user", "covariance could not be computed", "not determined:
        consistent with 0 up to 2 mohm (68 % profile likelihood)").
    interval : tuple of float, or None
        68 % profile-likelihood interval (low, high) in SI units where the first-order standard error was not
        trusted (see :mod:`fitz_tool.assessment`); ``low`` is 0.0 or ``high`` is inf when the data do not
        limit the parameter on that side. None when not computed.
    interval_note : str
        How ``interval`` was obtained, or why it could not be.
    """

    name: str
    value: float
    stderr: float | None
    unit: str
    vary: bool = True
    at_bound: str | None = None
    stderr_note: str = ""
    interval: tuple[float, float] | None = None
    interval_note: str = ""

    @property
    def undetermined(self) -> str:
        """Why the data do not determine this free parameter ("" when they do): at a bound, a profile
        interval that is open or reaches 0, or a standard error larger than the value. (A parameter with
        neither a standard error nor an interval is not judged here.)"""
        if not self.vary:
            return ""
        if self.at_bound:
            return f"at its {self.at_bound} bound"
        if self.stderr is None and self.interval is not None:
            low, high = self.interval
            if low <= 0 or math.isinf(high) or (high - low) / 2 > abs(self.value):
                return "not determined"
            return ""
        if self.stderr is not None and self.stderr > abs(self.value):
            return "not determined"
        return ""


@dataclass(frozen=True)
class FitResult:
    """Everything a fit produced: estimates, their correlations, quality measures and flags in words.

    ``chi_square`` is the sum of squared weighted residuals (real and imaginary parts of the log-impedance
    residual each divided by its sigma); ``n_points`` counts complex points, so the residual vector has
    ``2 * n_points`` entries and ``degrees_of_freedom = 2 * n_points - n_free``. ``weighting`` says how the
    residuals were weighted and ``noise_model`` the noise model used, in words ("" when none was estimated).
    """

    circuit: Circuit
    measurement: Measurement
    parameters: dict[str, ParameterEstimate]
    correlation_names: tuple[str, ...]
    correlation: np.ndarray | None
    covariance: np.ndarray | None
    chi_square: float
    reduced_chi_square: float
    aic: float
    bic: float
    n_points: int
    n_free: int
    success: bool
    message: str
    flags: tuple[str, ...] = ()
    weighting: str = ""
    noise_model: str = ""
    uvars: dict | None = field(default=None, repr=False)

    @property
    def values(self) -> dict[str, float]:
        """Parameter name -> value in SI."""
        return {name: p.value for name, p in self.parameters.items()}

    @property
    def degrees_of_freedom(self) -> int:
        return 2 * self.n_points - self.n_free

    def model_impedance(self, frequency: np.ndarray | None = None) -> np.ndarray:
        """Model impedance in ohm at ``frequency`` (Hz; default: the measured frequencies)."""
        f = self.measurement.frequency if frequency is None else np.asarray(frequency, dtype=float)
        return self.circuit.impedance(f, self.values)

    def log_residuals(self) -> np.ndarray:
        """ln(Z_measured / Z_model) per point: real part relative |Z| residual, imaginary part phase (rad)."""
        return np.log(self.measurement.impedance / self.model_impedance())


@dataclass(frozen=True)
class RankedModel:
    """One candidate of an automatic model choice."""

    expression: str
    result: FitResult | None
    bic: float
    adequate: bool
    note: str = ""


@dataclass(frozen=True)
class ModelSelection:
    """The ranking of candidates (best BIC first) and the chosen one."""

    ranking: tuple[RankedModel, ...]
    chosen: FitResult
    reason: str
