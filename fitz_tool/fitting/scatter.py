"""An independent noise estimate from the data's own point-to-point scatter, to judge a fit's residuals.

For a smooth response sampled densely, the second difference of consecutive points cancels the curve and
leaves the noise: for white noise of standard deviation s, ``d2_i = e_(i-1) - 2 e_i + e_(i+1)`` has standard
deviation ``s sqrt(6)`` (common practice, no source). The median absolute deviation (``1.4826 MAD`` for a
normal distribution) makes the estimate robust to the few points where the curve itself bends sharply (an
under-sampled resonance). It overestimates the noise where the sweep is coarse against the curvature, so a
fit judged against it errs on the side of trust.
"""

from __future__ import annotations

import numpy as np

__all__ = ["scatter_sigma", "FAR_ABOVE_SCATTER"]

#: Residual RMS above this multiple of the scatter estimate means the fit misses part of the data.
FAR_ABOVE_SCATTER = 5.0


def _robust_second_difference_sigma(values: np.ndarray) -> float:
    d2 = values[:-2] - 2 * values[1:-1] + values[2:]
    mad = float(np.median(np.abs(d2 - np.median(d2))))
    return 1.4826 * mad / np.sqrt(6.0)


def scatter_sigma(weighted_lnmag: np.ndarray, weighted_phase: np.ndarray) -> float | None:
    """Noise level (in the units of the weighted residual) from the point-to-point scatter of the weighted
    ln|Z| and unwrapped phase, both parts pooled; None for fewer than 12 points."""
    if weighted_lnmag.size < 12:
        return None
    sigmas = [_robust_second_difference_sigma(part) for part in (weighted_lnmag, weighted_phase)]
    return float(np.sqrt(np.mean(np.square(sigmas))))
