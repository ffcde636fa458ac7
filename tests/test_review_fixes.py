"""Bugs found in a review pass: flag wording at a bound, partial propagation, pure numbers in plain digits."""

import numpy as np

from fitz_tool.derived import design_values
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement
from fitz_tool.units import format_quantity, format_to_resolution


def _noisy(f: np.ndarray, z: np.ndarray, rel: float, phase_deg: float, seed: int) -> Measurement:
    rng = np.random.default_rng(seed)
    noise = rel * rng.standard_normal(f.size) + 1j * np.radians(phase_deg) * rng.standard_normal(f.size)
    return Measurement(f, z * np.exp(noise))


def test_exponent_at_its_bound_with_a_closed_symmetric_interval_names_the_interval_in_its_flag():
    # A dispersive 470 uF capacitor with 22 mohm ESR and 14 nH ESL, n = 0.9995: within 1e-3 of the
    # exponent's bound n = 1, so it counts as at the bound, yet 0.1 % / 0.05 deg noise closes its interval.
    # Z = Rs + j w Ls + 1 / (Q (j w)^n), the published constant phase element (common practice, no source).
    f = np.logspace(1, 6.7, 109)
    w = 2 * np.pi * f
    z = 0.022 + 1j * w * 14e-9 + 1 / (470e-6 * (1j * w) ** 0.9995)
    result = fit(_noisy(f, z, 0.001, 0.05, seed=2), "Rs + Ls + P1")
    n = result.parameters["P1_n"]
    assert n.at_bound == "upper" and n.stderr is not None and n.interval is not None
    assert n.stderr_note == ""  # the stderr stands, so there is nothing to explain
    flag = next(f for f in result.flags if f.startswith("P1_n sits at its upper bound"))
    assert ": ;" not in flag
    assert "68 % profile-likelihood interval 0.9994" in flag  # plain digits down to the interval's width
    assert "m" not in flag.split("(")[1].split(")")[0]  # the exponent is not shown as "999.5 m"


def test_design_value_that_moves_only_with_a_parameter_without_stderr_has_no_stderr_rather_than_zero():
    # An ideal 1 ohm resistor (Z = R, common practice, no source) measured at two frequencies and fitted
    # with R1 + L1: L1 is driven to its lower bound and has no standard error, R1 has one.
    f = np.array([100.0, 200.0])
    result = fit(Measurement(f, np.ones(2, dtype=complex)), "R1 + L1")
    assert result.parameters["L1"].stderr is None and result.parameters["R1"].stderr is not None
    values = design_values(result, at=[150.0]).points[0].values
    l_eff = values["L_eff"]  # X / w: depends on L1 only
    assert l_eff.stderr is None and "L1" in l_eff.note
    assert values["ESR"].stderr is not None and values["ESR"].stderr > 0  # R1 only: propagated


def test_pure_numbers_are_written_in_plain_digits():
    assert format_quantity(0.9995, "") == "0.9995"
    assert format_quantity(0.8734, "", 0.0021) == "0.8734 +/- 0.24 %"  # 0.0021 / 0.8734 = 0.24 %
    assert format_to_resolution(0.99942911, "", 4.7e-5) == "0.999429"
    assert format_to_resolution(21.982e-6, "H", 1.1e-8) == "21.982 uH"  # units keep their prefixes
