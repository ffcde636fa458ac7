"""Phasors as bench instruments report them: amplitude conventions, phase units and wrapping.

Conventions (common practice): a signal ``x(t) = A cos(w t + phi)`` is the phasor ``A e^{j phi}`` with time
dependence e^{+jwt}; the amplitude ``A`` is the *peak* value. Impedance is Z = V / I, so a positive phase of Z
(voltage leading current) is inductive. A sine reference instead of a cosine shifts every channel by the same
-90 degrees, and a common trigger delay shifts every channel by the same angle: both cancel in V / I, which is
why only phase *differences* matter and why each file may use its own reference.

Amplitudes of different channels are converted to peak, each by its own convention, before dividing
(a sinusoid's RMS is peak / sqrt(2), its peak-to-peak is 2 peak; common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "AMPLITUDE_CONVENTIONS",
    "to_peak",
    "wrap_degrees",
    "wrap_radians",
    "phase_to_radians",
    "polar_to_complex",
    "db_to_linear",
    "phasors_to_impedance",
]

#: Factor that turns an amplitude stated in each convention into the peak amplitude of a sinusoid.
AMPLITUDE_CONVENTIONS: dict[str, float] = {
    "peak": 1.0,
    "rms": math.sqrt(2.0),
    "pp": 0.5,
}


def to_peak(amplitude: np.ndarray, convention: str) -> np.ndarray:
    """Peak amplitude of a sinusoid from an amplitude stated as ``"peak"``, ``"rms"`` or ``"pp"``.

    Parameters
    ----------
    amplitude : array_like
        Amplitude in any unit (the unit is kept).
    convention : {"peak", "rms", "pp"}
        How the amplitude was stated: peak, root-mean-square, or peak-to-peak.

    Returns
    -------
    ndarray
        Peak amplitude, same unit: ``rms * sqrt(2)``, ``pp / 2``.
    """
    try:
        factor = AMPLITUDE_CONVENTIONS[convention]
    except KeyError:
        raise ValueError(f"unknown amplitude convention {convention!r}; use one of "
                         f"{', '.join(AMPLITUDE_CONVENTIONS)}") from None
    return np.asarray(amplitude, dtype=float) * factor


def wrap_degrees(phase: np.ndarray) -> np.ndarray:
    """Wrap phases in degrees into (-180, 180] (so -180 becomes +180)."""
    phase = np.asarray(phase, dtype=float)
    wrapped = 180.0 - np.mod(180.0 - phase, 360.0)
    return wrapped


def wrap_radians(phase: np.ndarray) -> np.ndarray:
    """Wrap phases in radians into (-pi, pi] (so -pi becomes +pi)."""
    phase = np.asarray(phase, dtype=float)
    return np.pi - np.mod(np.pi - phase, 2 * np.pi)


def phase_to_radians(phase: np.ndarray, unit: str) -> np.ndarray:
    """Phase in rad from a phase stated in ``"deg"`` or ``"rad"`` (not wrapped)."""
    phase = np.asarray(phase, dtype=float)
    if unit == "deg":
        return np.radians(phase)
    if unit == "rad":
        return phase.copy()
    raise ValueError(f"unknown phase unit {unit!r}; use 'deg' or 'rad'")


def polar_to_complex(magnitude: np.ndarray, phase_rad: np.ndarray) -> np.ndarray:
    """Complex phasor ``magnitude * e^{j phase}`` (phase in rad, magnitude in any unit)."""
    magnitude = np.asarray(magnitude, dtype=float)
    phase_rad = np.asarray(phase_rad, dtype=float)
    return magnitude * np.exp(1j * phase_rad)


def db_to_linear(gain_db: np.ndarray) -> np.ndarray:
    """Amplitude ratio from a gain in dB: ``10 ** (dB / 20)`` (voltage ratio; common practice, no source)."""
    return np.power(10.0, np.asarray(gain_db, dtype=float) / 20.0)


def phasors_to_impedance(v_peak: np.ndarray, v_phase_rad: np.ndarray, i_peak: np.ndarray,
                         i_phase_rad: np.ndarray) -> np.ndarray:
    """Impedance Z = V / I in ohm from peak amplitudes (V, A) and phases (rad) of voltage and current.

    Only the phase difference enters, so any reference common to both channels cancels.
    """
    ratio = np.asarray(v_peak, dtype=float) / np.asarray(i_peak, dtype=float)
    difference = np.asarray(v_phase_rad, dtype=float) - np.asarray(i_phase_rad, dtype=float)
    return polar_to_complex(ratio, wrap_radians(difference))
