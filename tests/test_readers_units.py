"""Units read right or refused: every unit word in a used header is understood or named in a one-line error.

Check values: an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it) and the
level relations of the trade, written into a file and read back.
"""

import math

import numpy as np
import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement
from fitz_tool.units import read_unit

F = np.array([1e3, 1e4, 1e5, 1e6, 1e7])
W = 2 * np.pi * F
Z = 1 / (1 / (1.0 + 1j * W * 10e-6) + 1j * W * 50e-12)
I_PK = 0.02 * np.exp(1j * np.linspace(-0.5, 2.5, F.size))  # A peak
V_PK = Z * I_PK


def write(tmp_path, header, columns, name="u.csv"):
    lines = [",".join(header)] + [",".join(f"{x:.17g}" for x in row) for row in np.column_stack(columns)]
    path = tmp_path / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def deg(x):
    return np.degrees(np.angle(x))


def test_angular_frequency_is_converted_and_recorded(tmp_path):
    # w = 2 pi f (common practice, no source)
    path = write(tmp_path, ["Frequency (rad/s)", "|Z| (Ohm)", "Phase (deg)"], [W, abs(Z), deg(Z)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-14)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.units["frequency"] == "rad/s"
    assert any("angular frequency" in s and "2 pi" in s for s in m.provenance.steps)


@pytest.mark.parametrize("unit", ["furlongs", "rpm", "°C", "Hz rms", "kdeg"])
def test_unknown_frequency_units_are_refused_naming_header_and_units_understood(tmp_path, unit):
    path = write(tmp_path, [f"Frequency ({unit})", "|Z| (Ohm)", "Phase (deg)"], [F, abs(Z), deg(Z)])
    with pytest.raises(InputError) as err:
        read_measurement(path)
    text = str(err.value)
    assert f"'Frequency ({unit})'" in text and f"unit {unit!r} is not understood" in text
    assert "Hz, kHz, MHz, GHz" in text and "rad/s" in text and "\n" not in text


def test_unknown_unit_on_the_map_route_and_after_an_underscore(tmp_path):
    path = write(tmp_path, ["a [parsecs]", "b", "c"], [F, abs(Z), deg(Z)])
    with pytest.raises(InputError, match="unit 'parsecs' is not understood"):
        read_measurement(path, ReadOptions(column_map={"frequency": "a [parsecs]", "z_magnitude": "b",
                                                       "z_phase": "c"}))
    path = write(tmp_path, ["freq_furlongs", "zmag_ohm", "phase_deg"], [F, abs(Z), deg(Z)], "u2.csv")
    with pytest.raises(InputError, match="unit 'furlongs' is not understood"):
        read_measurement(path)


def test_unknown_unit_in_an_unused_column_is_only_ignored(tmp_path):
    path = write(tmp_path, ["Frequency (Hz)", "|Z| (Ohm)", "Phase (deg)", "Temperature (°C)"],
                 [F, abs(Z), deg(Z), np.full(F.size, 23.0)])
    m = read_measurement(path)
    assert m.provenance.ignored_columns == ("Temperature (°C)",)


@pytest.mark.parametrize(("v_header", "v_scale", "i_header", "i_scale"), [
    # peak = sqrt(2) rms = pp / 2 for a sinusoid (common practice, no source)
    ("V mV pp", 2e3, "I (mA)", 1e3),
    ("Voltage [mV(rms)]", 1e3 / math.sqrt(2), "Current [uA pk]", 1e6),
    ("Voltage (mV) rms", 1e3 / math.sqrt(2), "Current_A", 1.0),
    ("rms Voltage (uV)", 1e6 / math.sqrt(2), "I [pk-pk mA]", 2e3),
    ("V (µV rms)", 1e6 / math.sqrt(2), "I (μA pp)", 2e6),
    ("Voltage (kV)", 1e-3, "I (A peak)", 1.0),
])
def test_prefixes_and_conventions_wherever_the_header_puts_them(tmp_path, v_header, v_scale, i_header,
                                                                  i_scale):
    path = write(tmp_path, ["f (kHz)", v_header, "Phase V (deg)", i_header, "Phase I (deg)"],
                 [F / 1e3, abs(V_PK) * v_scale, deg(V_PK), abs(I_PK) * i_scale, deg(I_PK)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


def test_shunt_voltage_after_an_underscore_needs_the_shunt(tmp_path):
    shunt = 0.1
    path = write(tmp_path, ["Frequency_Hz", "Part voltage_V", "Part phase_deg", "Shunt voltage_V",
                            "Shunt phase_deg"], [F, abs(V_PK), deg(V_PK), abs(I_PK) * shunt, deg(I_PK)])
    m = read_measurement(path, ReadOptions(shunt=shunt))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.form == "v_shunt"
    with pytest.raises(InputError, match="pass --shunt"):
        read_measurement(path)


@pytest.mark.parametrize(("unit", "reference_v_rms"), [
    # L = 20 log10(V_rms / V_ref) with V_ref = 1 V, 1 mV, 1 uV rms for dBV, dBmV, dBuV (common practice,
    # no source); so 0 dBV = 1 V rms, 0 dBmV = 1 mV rms, 0 dBuV = 1 uV rms.
    ("dBV", 1.0), ("dBmV", 1e-3), ("dBuV", 1e-6), ("dBµV", 1e-6),
])
def test_voltage_levels_in_db(tmp_path, unit, reference_v_rms):
    v_level = 20 * np.log10(abs(V_PK) / math.sqrt(2) / reference_v_rms)
    i_level = 20 * np.log10(abs(I_PK) / math.sqrt(2) / 1e-6)  # dBuA: re 1 uA rms (common practice)
    path = write(tmp_path, ["Frequency (Hz)", f"Ch1 Level ({unit})", "Ch1 Phase (deg)", "Ch2 Current (dBuA)",
                            "Ch2 Phase (deg)"], [F, v_level, deg(V_PK), i_level, deg(I_PK)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)


def test_db_level_spot_values():
    # 0 dBV = 1 V rms; +6.0206 dBV = 2 V rms; -20 dBuV = 0.1 uV rms (common practice, no source)
    from fitz_tool.readers.forms import _level_to_amplitude
    from fitz_tool.readers.headers import parse_header

    values, _ = _level_to_amplitude("v_amplitude", parse_header("V (dBV)", 0),
                                    np.array([0.0, 20 * math.log10(2)]), None, "x")
    np.testing.assert_allclose(values, np.array([1.0, 2.0]) * math.sqrt(2), rtol=1e-14)
    values, _ = _level_to_amplitude("v_amplitude", parse_header("V (dBuV)", 0), np.array([-20.0]), None, "x")
    np.testing.assert_allclose(values, [0.1e-6 * math.sqrt(2)], rtol=1e-14)


def test_dbm_levels_need_the_reference_impedance(tmp_path):
    # P = V_rms^2 / R, L = 10 log10(P / 1 mW): 0 dBm into 50 ohm is sqrt(0.05) = 0.2236 V rms
    # (common practice, no source)
    r = 50.0
    v_dbm = 10 * np.log10((abs(V_PK) / math.sqrt(2)) ** 2 / r / 1e-3)
    s_dbm = 10 * np.log10((abs(I_PK) * 0.1 / math.sqrt(2)) ** 2 / r / 1e-3)
    path = write(tmp_path, ["Freq (MHz)", "Part level (dBm)", "Part phase (deg)", "Shunt level (dBm)",
                            "Shunt phase (deg)"], [F / 1e6, v_dbm, deg(V_PK), s_dbm, deg(I_PK)])
    with pytest.raises(InputError, match="pass --dbm-reference OHMS"):
        read_measurement(path, ReadOptions(shunt=0.1))
    m = read_measurement(path, ReadOptions(shunt=0.1, dbm_reference=r))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert any("--dbm-reference" in s for s in m.provenance.steps)
    from fitz_tool.readers.forms import _level_to_amplitude
    from fitz_tool.readers.headers import parse_header

    zero, _ = _level_to_amplitude("v_amplitude", parse_header("V (dBm)", 0), np.array([0.0]), 50.0, "x")
    assert zero[0] / math.sqrt(2) == pytest.approx(0.22360679774997896, rel=1e-14)


@pytest.mark.parametrize(("unit", "scale"), [
    ("Ohm", 1.0), ("mOhm", 1e3), ("kOhm", 1e-3), ("MOhm", 1e-6), ("Ω", 1.0), ("mΩ", 1e3), ("kΩ", 1e-3),
    ("MΩ", 1e-6), ("\u2126", 1.0), ("µΩ", 1e6), ("ohms", 1.0),
])
def test_impedance_units(tmp_path, unit, scale):
    # SI prefix multipliers: BIPM SI Brochure, 9th edition, Table 7
    path = write(tmp_path, ["Frequency (Hz)", f"R ({unit})", f"X ({unit})"],
                 [F, Z.real * scale, Z.imag * scale])
    np.testing.assert_allclose(read_measurement(path).impedance, Z, rtol=1e-12)


@pytest.mark.parametrize(("text", "expected"), [
    ("kHz", ("k", "Hz", None)), ("mhz", ("M", "Hz", None)), ("mHz", ("m", "Hz", None)),
    ("GHz", ("G", "Hz", None)), ("rad/s", ("", "rad/s", None)), ("°", ("", "deg", None)),
    ("mV(rms)", ("m", "V", "rms")), ("rms mV", ("m", "V", "rms")), ("Vp-p", ("", "V", "pp")),
    ("dBmV", ("m", "dBV", "rms")), ("dBm", ("", "dBm", None)), ("MΩ", ("M", "ohm", None)),
    ("kilohm", ("k", "ohm", None)), ("microfarad", ("u", "F", None)), ("nH", ("n", "H", None)),
    ("Henries", ("", "H", None)), ("MEGOHM", ("M", "ohm", None)), ("MHZ", ("M", "Hz", None)),
    ("MV", None), ("MA", None), ("MOHM", None), ("furlongs", None), ("Hz rms", None), ("mdB", None),
    ("", None),
])
def test_unit_grammar(text, expected):
    assert read_unit(text) == expected


def test_cli_dbm_reference_option(tmp_path, capsys):
    r = 50.0
    v_dbm = 10 * np.log10((abs(V_PK) / math.sqrt(2)) ** 2 / r / 1e-3)
    path = write(tmp_path, ["Freq (Hz)", "Part level (dBm)", "Part phase (deg)", "Current (A)",
                            "I phase (deg)"], [F, v_dbm, deg(V_PK), abs(I_PK), deg(I_PK)])
    assert main(["inspect", str(path)]) == 2
    assert "--dbm-reference" in capsys.readouterr().err
    assert main(["inspect", str(path), "--dbm-reference", "50"]) == 0


def test_cli_refusal_is_one_line(tmp_path, capsys):
    path = write(tmp_path, ["Frequency (furlongs)", "|Z| (Ohm)", "Phase (deg)"], [F, abs(Z), deg(Z)])
    assert main(["inspect", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert "furlongs" in err and len(err.splitlines()) == 1 and "Traceback" not in err


def test_capital_m_on_volts_amperes_or_ohms_is_refused_not_guessed(tmp_path):
    # an export in capitals writes mV and MV alike; a factor 1e9 must never pass unnoticed
    path = write(tmp_path, ["FREQUENCY (HZ)", "IMPEDANCE (MOHM)", "PHASE (DEG)"], [F, abs(Z) * 1e3, deg(Z)])
    with pytest.raises(InputError, match="unit 'MOHM' is not understood"):
        read_measurement(path)
