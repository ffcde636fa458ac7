"""Amplitude conventions, phase wrapping and the e^{+jwt}, Z = V/I sign convention."""

import cmath
import math

import numpy as np
import pytest

from fitz_tool.phasor import (
    db_to_linear,
    phase_to_radians,
    phasors_to_impedance,
    polar_to_complex,
    to_peak,
    wrap_degrees,
    wrap_radians,
)


def test_amplitude_conventions_of_a_sinusoid():
    # A sinusoid's peak is sqrt(2) times its RMS and half its peak-to-peak (common practice, no source).
    assert to_peak(1.0, "rms") == pytest.approx(math.sqrt(2), rel=1e-15)
    assert to_peak(2.0, "pp") == pytest.approx(1.0, rel=1e-15)
    assert to_peak(0.7, "peak") == pytest.approx(0.7, rel=1e-15)
    with pytest.raises(ValueError, match="convention"):
        to_peak(1.0, "avg")


def test_rms_of_a_sampled_sine_matches_the_convention():
    # Numerical RMS of a sampled sine over whole periods (numpy as the independent computation).
    t = np.linspace(0, 1, 10000, endpoint=False)
    wave = 3.0 * np.sin(2 * np.pi * 5 * t + 0.3)
    rms = np.sqrt(np.mean(wave**2))
    peak_to_peak = wave.max() - wave.min()
    assert to_peak(rms, "rms") == pytest.approx(3.0, rel=1e-9)
    assert to_peak(peak_to_peak, "pp") == pytest.approx(3.0, rel=1e-5)


@pytest.mark.parametrize(("phase", "wrapped"), [
    (0.0, 0.0), (180.0, 180.0), (-180.0, 180.0), (190.0, -170.0), (-190.0, 170.0),
    (540.0, 180.0), (359.0, -1.0), (-359.5, 0.5), (720.0, 0.0),
])
def test_phase_wraps_into_half_open_interval(phase, wrapped):
    # (-180, 180] by definition of the convention (common practice, no source).
    assert wrap_degrees(phase) == pytest.approx(wrapped, abs=1e-12)
    assert wrap_radians(math.radians(phase)) == pytest.approx(math.radians(wrapped), abs=1e-12)


def test_phase_units_and_polar_form_match_the_standard_library():
    # cmath.rect is the Python standard library's polar -> complex conversion.
    assert phase_to_radians(90.0, "deg") == pytest.approx(math.pi / 2)  # common practice, no source
    assert phase_to_radians(1.25, "rad") == pytest.approx(1.25)
    with pytest.raises(ValueError):
        phase_to_radians(1.0, "grad")
    for magnitude, phase in [(2.0, 0.3), (0.5, -2.9), (7.0, math.pi)]:
        assert polar_to_complex(magnitude, phase) == pytest.approx(cmath.rect(magnitude, phase), rel=1e-15)


def test_decibels_are_voltage_ratios():
    # 20 dB is a voltage ratio of 10, -6.0206 dB one half (common practice, no source).
    assert db_to_linear(20.0) == pytest.approx(10.0, rel=1e-15)
    assert db_to_linear(20 * math.log10(0.5)) == pytest.approx(0.5, rel=1e-14)


def _phasor_of(samples: np.ndarray, t: np.ndarray, w: float, reference: str) -> complex:
    """Least-squares amplitude and phase of a sampled sinusoid against a cos or sin reference."""
    basis = np.column_stack([np.cos(w * t), np.sin(w * t)])
    a, b = np.linalg.lstsq(basis, samples, rcond=None)[0]
    amplitude, phase = math.hypot(a, b), math.atan2(-b, a)  # x = A cos(w t + phase)
    if reference == "sin":
        phase += math.pi / 2  # x = A sin(w t + phase + 90 deg)
    return cmath.rect(amplitude, phase)


@pytest.mark.parametrize("reference", ["cos", "sin"])
def test_inductor_waveforms_give_positive_reactance_with_either_reference(reference):
    # v = R i + L di/dt in the time domain; its phasor ratio is R + j w L (common practice, no source).
    R, L, f = 2.0, 1e-3, 1e3
    w = 2 * np.pi * f
    t = np.linspace(0, 4 / f, 4000, endpoint=False)
    current = 0.2 * np.cos(w * t + 0.4)
    voltage = R * current + L * (-0.2 * w * np.sin(w * t + 0.4))
    v, i = _phasor_of(voltage, t, w, reference), _phasor_of(current, t, w, reference)
    z = phasors_to_impedance(abs(v), cmath.phase(v), abs(i), cmath.phase(i))
    assert z == pytest.approx(R + 1j * w * L, rel=1e-9)
    assert z.imag > 0


def test_phase_difference_is_wrapped():
    # 170 - (-170) = 340 deg, which is -20 deg in (-180, 180] (common practice, no source)
    z = phasors_to_impedance(1.0, math.radians(170.0), 1.0, math.radians(-170.0))
    assert math.degrees(cmath.phase(z)) == pytest.approx(-20.0, abs=1e-12)
    assert abs(z) == pytest.approx(1.0, rel=1e-15)


def test_a_sine_reference_shifts_both_channels_and_cancels():
    # the same -90 deg shift on V and I leaves V / I unchanged (common practice, no source)
    z = phasors_to_impedance(2.0, math.radians(30.0), 0.5, math.radians(-15.0))
    shifted = phasors_to_impedance(2.0, math.radians(30.0 - 90.0), 0.5, math.radians(-15.0 - 90.0))
    assert z == pytest.approx(cmath.rect(4.0, math.radians(45.0)), rel=1e-12)
    assert shifted == pytest.approx(z, rel=1e-12)
