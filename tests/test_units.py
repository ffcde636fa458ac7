"""SI prefixes in, engineering notation out."""

import pytest

from fitz_tool.exceptions import InputError
from fitz_tool.units import format_quantity, parse_quantity


@pytest.mark.parametrize(
    ("text", "unit", "expected"),
    [
        # SI prefix multipliers: BIPM SI Brochure, 9th edition, Table 7.
        ("100k", "Hz", 1e5),
        ("2.2uH", "H", 2.2e-6),
        ("2.2\u00b5H", "H", 2.2e-6),
        ("1.5 MHz", "Hz", 1.5e6),
        ("100m", "ohm", 0.1),
        ("10meg", "", 1e7),  # SPICE's "meg" for mega: common practice, no source
        ("4.7kohm", "ohm", 4.7e3),
        ("1e-9", "", 1e-9),
        ("-3n", "s", -3e-9),
    ],
)
def test_parse_quantity_reads_si_prefixes(text, unit, expected):
    assert parse_quantity(text, unit) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["abc", "1.2.3", "5 furlongs", ""])
def test_parse_quantity_refuses_nonsense(text):
    with pytest.raises(InputError, match="cannot read"):
        parse_quantity(text, "Hz")


def test_value_shows_only_the_digits_its_uncertainty_supports():
    # 22.07 uH with 31 nH standard error: two significant digits of the uncertainty (0.031 uH) fix the
    # last shown decimal (common practice, no source).
    assert format_quantity(22.07e-6, "H", 3.1e-8) == "22.070 uH +/- 0.14 %"
    assert format_quantity(0.05, "ohm", 0.04) == "50 mohm +/- 80 %"
    assert format_quantity(1.2345e6, "Hz", 2.0e3) == "1.2345 MHz +/- 0.16 %"


def test_value_without_uncertainty_has_four_significant_digits():
    assert format_quantity(1.234567e-12, "F") == "1.235 pF"
    assert format_quantity(47e-6, "F") == "47.00 uF"


def test_a_value_that_rounds_up_to_the_next_prefix_keeps_four_significant_digits():
    # 999.96 to four significant digits is 1000, i.e. 1.000 kHz (common practice, no source)
    assert format_quantity(999.96, "Hz") == "1.000 kHz"


def test_a_value_that_rounds_up_to_the_next_decade_keeps_four_significant_digits():
    # 9.9996 uH to four significant digits is 10.00 uH (common practice, no source)
    assert format_quantity(9.9996e-6, "H") == "10.00 uH"


def test_a_value_with_uncertainty_that_rounds_up_to_the_next_prefix_keeps_its_resolution():
    # two significant digits of 1.1 Hz put the last digit at 0.1 Hz: 1000.0 Hz = 1.0000 kHz
    # (common practice, no source)
    assert format_quantity(999.96, "Hz", 1.1) == "1.0000 kHz +/- 0.11 %"


def test_interval_ends_show_the_digits_of_the_interval_width():
    # two significant digits of the half-width 0.011 uH fix the last decimal (common practice, no source)
    from fitz_tool.units import format_to_resolution

    assert format_to_resolution(21.982e-6, "H", 1.1e-8) == "21.982 uH"
    assert format_to_resolution(0.0, "ohm", 1e-3) == "0 ohm"


def test_spice_meg_suffix_ignores_case():
    # SPICE scale factors are case-insensitive, MEG = 1e6 (common practice, no source)
    assert parse_quantity("10Meg") == parse_quantity("10MEG") == pytest.approx(1e7)


def test_engineering_notation_agrees_with_matplotlib_engformatter():
    # reference: matplotlib.ticker.EngFormatter (a general-purpose library), over values of every decade
    import numpy as np
    from matplotlib.ticker import EngFormatter

    from fitz_tool.units import _eng

    rng = np.random.default_rng(0)
    values = np.concatenate([10 ** rng.uniform(-28, 28, 400), -(10 ** rng.uniform(-20, 20, 100)),
                             [0.0, 999.96, 999.9996e-6, 1e3, 1.0]])
    for places in (None, 0, 1, 2, 4):
        for unit in ("H", "", "ohm"):
            reference = EngFormatter(unit=unit, places=places, sep=" ", usetex=False, useMathText=False)
            for v in values:
                expected = reference(float(v)).replace("\u00b5", "u").replace("\u2212", "-")
                assert _eng(float(v), unit, places) == expected, (v, unit, places)
