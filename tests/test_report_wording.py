"""What the engineer reads: plain words for forms, optimiser messages and fit quality; one-depth numbers."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from test_derived import synthetic_result

from fitz_tool.inspection import Band, InspectionSummary, Resonance, character_sentence
from fitz_tool.measurement import Measurement, Provenance
from fitz_tool.outputs.wording import (
    describe_form,
    fit_quality,
    plain_message,
    quality_sentence,
    two_digits,
)
from fitz_tool.readers.forms import INPUT_FORMS, OTHER_FORMS, form_words
from fitz_tool.units import for_terminal, format_interval, format_quantity, to_ascii, with_symbols


def test_interval_ends_share_one_prefix():
    # the case from the bench: 999.35 nH to 1.00051 uH must not mix nano and micro
    text = format_interval(999.35e-9, 1.00051e-6, "H", 0.5e-9)
    assert text == "0.99935 to 1.00051 uH"
    assert format_interval(22.0042e-3, 22.0125e-3, "ohm", 4e-6) == "22.0042 to 22.0125 mohm"
    assert format_interval(0.1, 0.3, "", 0.1) == "0.10 to 0.30"


def test_small_pure_numbers_use_a_power_of_three_not_leading_zeros():
    # D = 1.8955e-5 with 0.4 % uncertainty: the digits the uncertainty supports, without "0.0000"
    assert format_quantity(1.8955e-5, "", 7.6e-8) == "18.955e-6 +/- 0.4 %"
    assert format_quantity(1.8955e-5, "") == "18.96e-6"
    assert format_quantity(0.004020, "", 1.6e-5) == "0.004020 +/- 0.4 %"  # 1e-3 and up: plain digits
    assert format_quantity(-2.5e-7, "") == "-250e-9"


def test_unit_symbols_after_numbers_only():
    assert with_symbols("Rs 17.88 mohm +/- 1.6 %") == "Rs 17.88 m\u03a9 \u00b1 1.6 %"
    assert (with_symbols("L 21.993 uH, C 4.7 uF, 0.1 ohm shunt")
            == "L 21.993 \u00b5H, C 4.7 \u00b5F, 0.1 \u03a9 shunt")
    # words and file names keep their spelling: "kOhm -> ohm" in a conversion step, "10ohm_shunt.csv"
    assert with_symbols("'R (kOhm)': kOhm -> ohm (x 1000)") == "'R (kOhm)': kOhm -> ohm (x 1000)"
    assert with_symbols("read 10ohm_shunt.csv") == "read 10ohm_shunt.csv"


def test_terminal_falls_back_to_ascii_only_when_the_encoding_cannot_show_symbols():
    text = "22.0 \u00b5H \u00b1 0.1 %, 17 m\u03a9"
    assert for_terminal(text, "utf-8") == text
    assert for_terminal(text, "ascii") == "22.0 uH +/- 0.1 %, 17 mohm"
    assert for_terminal(text, "latin-1") == "22.0 uH +/- 0.1 %, 17 mohm"  # latin-1 has no Omega
    assert to_ascii("\u2212 5 \u00b0") == "- 5  deg"


def test_optimiser_messages_in_plain_words():
    raw = "`gtol` termination condition is satisfied. (from the data-derived seed, 7 evaluations)"
    assert plain_message(raw) == ("converged: chi-square is flat at the solution "
                                  "(from the data-derived seed, 7 evaluations)")
    assert "termination" not in plain_message("Both `ftol` and `xtol` termination conditions are satisfied.")
    assert plain_message("The maximum number of function evaluations is exceeded.").startswith("stopped")
    assert plain_message("something new") == "something new"


#: What the reports said of each recorded form before the words had one home (the text must not change).
SAID = {
    "z_polar": "impedance magnitude and phase",
    "touchstone_s11": "network-analyzer reflection (S11, Touchstone)",
    "touchstone_s21_shunt": "network-analyzer transmission S21, part shunted across the through line "
                            "(Touchstone)",
    "touchstone_s21_series": "network-analyzer transmission S21, part in series with the line (Touchstone)",
    "simulator_complex": "complex values from a circuit-simulator export",
    "synthetic": "data built in code",
    "lcr_cs_rs": "LCR-meter readings (series capacitance and series resistance)",
}


def _in_code(form: str, description: str = "") -> Measurement:
    return Measurement(np.array([1e3, 2e3]), np.array([1 + 1j, 1 + 2j]),
                       provenance=Provenance(form=form, description=description))


def test_every_recorded_form_has_words_from_one_home():
    codes = ["v_shunt", *(f.recorded or name for name, f in INPUT_FORMS.items()), *OTHER_FORMS]
    for code in codes:
        words = describe_form(_in_code(code))
        assert words == form_words(code) and words and "_" not in words and "?" not in words, code
    for code, said in SAID.items():
        assert describe_form(_in_code(code)) == said
    assert describe_form(_in_code("v_shunt")) == "voltage across the part and across a series current shunt"
    assert describe_form(_in_code("z_polar", "what the reader said")) == "what the reader said"
    assert describe_form(_in_code("some_new_form")) == "some new form"


def test_quality_without_stated_noise_is_the_residual_scatter():
    fitted = synthetic_result()
    unstated = dataclasses.replace(fitted.measurement, sigma_lnmag=None, sigma_phase=None,
                                   sigma_absolute=False)
    result = dataclasses.replace(fitted, measurement=unstated)
    q = fit_quality(result)
    residual = result.log_residuals()
    assert math.isclose(q.scatter_abs, float(np.sqrt(np.mean(residual.real**2))), rel_tol=1e-12)
    assert not q.stated_noise and q.p_value is None
    sentence = quality_sentence(q)
    assert sentence.startswith(f"residual scatter {two_digits(100 * q.scatter_abs)} % of |Z|")
    assert "chi-square" not in sentence


def test_quality_with_stated_noise_gives_chi_square_and_its_p_value():
    result = synthetic_result()
    m = result.measurement
    stated = dataclasses.replace(m, sigma_lnmag=np.full(len(m), 1e-3), sigma_phase=np.full(len(m), 1e-3),
                                 sigma_absolute=True)
    # two points, free parameters chosen so that 2 degrees of freedom remain
    two_dof = dataclasses.replace(result, measurement=stated, chi_square=3.0, n_points=3, n_free=4)
    assert two_dof.degrees_of_freedom == 2
    q = fit_quality(two_dof)
    # chi-square with 2 degrees of freedom: P(X >= x) = exp(-x / 2) (handbook closed form, from memory)
    assert math.isclose(q.p_value, math.exp(-1.5), rel_tol=1e-12)
    assert "p = 0.22" in quality_sentence(q) and "consistent with the stated noise" in quality_sentence(q)


def _summary(bands, resonances):
    return InspectionSummary(points=sum(b.points for b in bands), f_min=bands[0].f_low,
                             f_max=bands[-1].f_high,
                             z_min=1.0, f_at_z_min=1.0, z_max=2.0, f_at_z_max=1.0, bands=tuple(bands),
                             resonances=tuple(resonances))


def test_character_reads_as_a_sentence():
    choke = _summary([Band("inductive", 1e3, 9.5e6, 80), Band("resistive", 9.7e6, 9.9e6, 2),
                      Band("capacitive", 10.2e6, 30e6, 20)], [Resonance(9.8e6, 14e3, "parallel", "maximum")])
    assert character_sentence(choke) == "inductive from 1.000 kHz to 9.800 MHz, capacitive above"
    resistor = _summary([Band("resistive", 1e3, 1e6, 50)], [])
    assert character_sentence(resistor).startswith("nearly resistive throughout")
    low_end = _summary([Band("resistive", 20.0, 100.0, 5), Band("capacitive", 120.0, 1e5, 30)], [])
    assert character_sentence(low_end) == ("nearly resistive (|phase| < 10 deg) from 20.00 Hz to 120.0 Hz, "
                                           "capacitive above")


def test_bare_frequencies_in_notes_are_shown_in_engineering_notation():
    from fitz_tool.derived import DerivedValue
    from fitz_tool.outputs.report import format_derived_value

    note = "undefined at resonance: 1e+05 Hz lies within half a bandwidth (2.5e+05 Hz) of 62046.7 Hz"
    text = format_derived_value(DerivedValue("Q", "quality factor", float("nan"), None, "", note))
    assert "100.0 kHz" in text and "250.0 kHz" in text and "62.05 kHz" in text and "e+05" not in text
