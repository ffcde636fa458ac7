"""A bench setup simulated in ngspice, exported as bench files in several layouts, read back.

The bench: generator (50 ohm) -> part -> 0 V current sense -> 0.1 ohm shunt -> ground. The part is a choke
model, (1.5 ohm + 22 uH) || 47 pF. The reference is the impedance ngspice reports for the part alone,
driven by a 1 A AC current source (a separate analysis), so every import is checked against ngspice itself.
"""

import math

import numpy as np
import pytest
from spice_sim import ac_analysis

from fitz_tool.readers import ReadOptions, read_measurement

PART = """
Rw {a} m 1.5
Lw m {b} 22u
Cw {a} {b} 47p
"""
BENCH = """
V1 gen 0 AC 1
Rg gen a 50
""" + PART.format(a="a", b="b") + """
Vsense b c 0
Rsh c 0 0.1
"""
ALONE = "I1 0 p AC 1\n" + PART.format(a="p", b="0")
SWEEP = (1e3, 100e6, 10)


@pytest.fixture(scope="module")
def bench():
    f, v = ac_analysis(BENCH, ["v(a)", "v(b)", "i(vsense)"], *SWEEP)
    f_alone, z = ac_analysis(ALONE, ["v(p)"], *SWEEP)
    np.testing.assert_allclose(f_alone, f, rtol=1e-14)
    return f, v["v(a)"] - v["v(b)"], v["v(b)"], v["i(vsense)"], z["v(p)"]


def deg(x):
    return np.degrees(np.angle(x))


def write(path, header, columns, delimiter=",", decimal=".", preamble=(), encoding="utf-8", reverse=False):
    rows = np.column_stack(columns)[::-1 if reverse else 1]
    lines = [*preamble, delimiter.join(header)]
    lines += [delimiter.join(f"{x:.17g}".replace(".", decimal) for x in row) for row in rows]
    path.write_bytes(("\n".join(lines) + "\n").encode(encoding))
    return path


def check(m, f, z_ngspice):
    np.testing.assert_allclose(m.frequency, f, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, z_ngspice, rtol=1e-9)  # ngspice AC analysis


def test_scope_with_shunt_in_mv_pp_and_kilohertz(bench, tmp_path):
    f, v_part, v_shunt, _, z = bench
    # ngspice's AC amplitudes are peak; pp = 2 peak, rms = peak / sqrt(2) (common practice, no source)
    path = write(tmp_path / "scope.csv",
                 ["Frequency (kHz)", "Ch1 V(DUT) (mV pp)", "Ch1 Phase (deg)", "Ch2 V(shunt) (mV rms)",
                  "Ch2 Phase (rad)"],
                 [f / 1e3, 2e3 * abs(v_part), deg(v_part), 1e3 * abs(v_shunt) / math.sqrt(2),
                  np.angle(v_shunt)],
                 preamble=("Bench scope export", "Shunt: 0.1 ohm", ""))
    m = read_measurement(path, ReadOptions(shunt=0.1))
    check(m, f, z)  # ngspice AC analysis
    assert m.provenance.form == "v_shunt"


def test_voltage_and_current_semicolons_decimal_commas(bench, tmp_path):
    f, v_part, _, current, z = bench
    path = write(tmp_path / "vi.csv", ["Freq [MHz]", "Voltage (V)", "Voltage phase (deg)", "Current (mA)",
                                       "Current phase (deg)"],
                 [f / 1e6, abs(v_part), deg(v_part), 1e3 * abs(current), deg(current)],
                 delimiter=";", decimal=",")
    check(read_measurement(path), f, z)  # ngspice AC analysis


def test_ratio_against_the_shunt_as_reference_in_db_tab_descending(bench, tmp_path):
    f, v_part, v_shunt, _, z = bench
    h = v_part / v_shunt  # gain in dB = 20 log10 of the voltage ratio (common practice, no source)
    path = write(tmp_path / "gain.txt", ["Frequency (Hz)", "Gain (dB)", "Phase (deg)"],
                 [f, 20 * np.log10(abs(h)), deg(h)], delimiter="\t", reverse=True,
                 preamble=("# gain/phase analyzer, B/A", "# reference 0.1 ohm"))
    m = read_measurement(path, ReadOptions(reference=0.1))
    check(m, f, z)  # ngspice AC analysis
    assert any("descending" in s for s in m.provenance.steps)


def test_latin1_micro_amperes_rms_with_peak_voltage(bench, tmp_path):
    f, v_part, _, current, z = bench
    # rms = peak / sqrt(2) (common practice, no source); micro = 1e-6 (BIPM SI Brochure, from memory)
    path = write(tmp_path / "latin1.csv",
                 ["f (Hz)", "V (V peak)", "Phase V (°)", "I (µA rms)", "Phase I (°)"],
                 [f, abs(v_part), deg(v_part), 1e6 * abs(current) / math.sqrt(2), deg(current)],
                 encoding="latin-1")
    check(read_measurement(path), f, z)  # ngspice AC analysis


@pytest.mark.parametrize(("element", "value", "handbook"), [
    ("C", 1e-6, lambda w, x: 1 / (1j * w * x)),   # Z_C = 1/(j w C)  (common practice, no source)
    ("L", 10e-6, lambda w, x: 1j * w * x),        # Z_L = j w L      (common practice, no source)
])
def test_ideal_parts_on_the_bench_match_the_handbook(tmp_path, element, value, handbook):
    netlist = f"V1 gen 0 AC 1\nRg gen a 50\n{element}1 a b {value}\nRsh b 0 1\n"
    f, v = ac_analysis(netlist, ["v(a)", "v(b)"], 1e3, 1e6, 5)
    v_part, v_shunt = v["v(a)"] - v["v(b)"], v["v(b)"]
    path = write(tmp_path / "ideal.csv",
                 ["Frequency (Hz)", "V(DUT) (V)", "Phase V(DUT) (deg)", "V(shunt) (V)",
                  "Phase V(shunt) (deg)"],
                 [f, abs(v_part), deg(v_part), abs(v_shunt), deg(v_shunt)])
    m = read_measurement(path, ReadOptions(shunt=1.0))
    np.testing.assert_allclose(m.impedance, handbook(2 * np.pi * f, value), rtol=1e-9)
    at_1k = m.impedance[np.argmin(abs(m.frequency - 1e3))]
    expected = -1j / (2 * np.pi * 1e3 * value) if element == "C" else 2j * np.pi * 1e3 * value
    assert at_1k == pytest.approx(expected, rel=1e-9)  # handbook formula (common practice, no source)
