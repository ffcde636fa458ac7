"""Circuit-simulator exports: complex cells (polar dB / cartesian), ngspice print and wrdata output.

Two kinds of check: files written here from an impedance computed with numpy, (1.5 ohm + 22 uH) || 47 pF,
and files written by ngspice itself (its AC analysis output as it comes), read back and compared with the
impedance ngspice reports for the part driven alone by a 1 A AC current source.
"""

import subprocess

import numpy as np
import pytest
from spice_sim import ac_analysis, require_ngspice

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.logspace(3, 7, 9)
W = 2 * np.pi * F
Z = 1 / (1 / (1.5 + 1j * W * 22e-6) + 1j * W * 47e-12)
# a source's current, counted into its + terminal (SPICE convention, ngspice manual, from memory)
I_SOURCE = -0.01 * np.exp(1j * np.linspace(0, 1, F.size))


def polar(x):
    # magnitude in dB = 20 log10 |x|, angle in degrees (common practice, no source)
    return f"({20 * np.log10(abs(x)):.15e}dB,{np.degrees(np.angle(x)):.15e}°)"


def cartesian(x):
    return f"{x.real:.15e},{x.imag:.15e}"


def write(tmp_path, header, columns, encoding="latin-1", between=None):
    lines = ["\t".join(header)]
    for k, row in enumerate(zip(*columns, strict=True)):
        if between and k in between:
            lines.append(between[k])
        lines.append("\t".join([f"{F[k]:.15e}", *row]))
    path = tmp_path / "export.txt"
    path.write_bytes(("\n".join(lines) + "\n").encode(encoding))
    return path


@pytest.mark.parametrize("cell", [polar, cartesian])
@pytest.mark.parametrize("encoding", ["latin-1", "utf-8"])
def test_impedance_column_in_polar_or_cartesian_cells(tmp_path, cell, encoding):
    path = write(tmp_path, ["Freq.", "V(n001)/I(V1)"], [[cell(z) for z in Z]], encoding)
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-14)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-13)
    assert m.provenance.form == "simulator_complex"
    assert m.provenance.columns == {"frequency": "Freq.", "z_complex": "V(n001)/I(V1)"}


def test_voltage_and_source_current_give_z_with_the_sign_restored(tmp_path):
    v = -Z * I_SOURCE  # the part's current is minus the source's current
    path = write(tmp_path, ["Freq.", "V(a)", "I(V1)"],
                 [[polar(x) for x in v], [cartesian(x) for x in I_SOURCE]])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-13)
    assert any("Z was negated" in w for w in m.provenance.warnings)


def test_voltage_and_resistor_current_need_no_sign_change(tmp_path):
    i = -I_SOURCE
    path = write(tmp_path, ["Freq.", "V(out)", "I(R1)"],
                 [[cartesian(x) for x in Z * i], [cartesian(x) for x in i]])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-13)
    assert m.provenance.warnings == ()


def test_a_voltage_alone_is_refused_with_a_map_hint_and_then_read(tmp_path):
    path = write(tmp_path, ["Freq.", "V(n001)"], [[polar(z) for z in Z]])
    with pytest.raises(InputError, match=r"--map z_complex='V\(n001\)'"):
        read_measurement(path)
    m = read_measurement(path, ReadOptions(column_map={"z_complex": "V(n001)"}))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-13)


def test_magnitude_only_db_cells_are_refused(tmp_path):
    path = write(tmp_path, ["Freq.", "V(n001)"], [[f"{20 * np.log10(abs(z)):.6e}dB" for z in Z]])
    with pytest.raises(InputError, match="dB and no phase"):
        read_measurement(path)


def test_step_information(tmp_path):
    one = write(tmp_path, ["Freq.", "Z"], [[cartesian(z) for z in Z]], between={0: "Step Information: R=1.5"})
    m = read_measurement(one)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-13)
    assert any("one sweep" in s for s in m.provenance.steps)
    steps = {0: "Step Information: R=1.5  (Run: 1/2)", 5: "Step Information: R=3  (Run: 2/2)"}
    with pytest.raises(InputError, match=r"2 stepped sweeps .*lines 2, 8.*one step per file"):
        read_measurement(write(tmp_path, ["Freq.", "Z"], [[cartesian(z) for z in Z]], between=steps))


def test_bad_complex_cell_names_line_and_column(tmp_path):
    cells = [cartesian(z) for z in Z]
    cells[3] = "garbage"
    with pytest.raises(InputError, match=r"line 5, column 'V\(a\)/I\(V1\)': 'garbage'"):
        read_measurement(write(tmp_path, ["Freq.", "V(a)/I(V1)"], [cells]))


# --- ngspice itself writes the file ---------------------------------------------------------------------

PART = "R1 {a} m 1.5\nL1 m {b} 22u\nC1 {a} {b} 47p\n"
ALONE = "I1 0 p AC 1\n" + PART.format(a="p", b="0")  # 1 A drives the part: v(p) is Z
BENCH = "V1 g 0 AC 1\nR0 g p 50\n" + PART.format(a="p", b="0")


@pytest.fixture(scope="module")
def reference():
    f, z = ac_analysis(ALONE, ["v(p)"], 1e3, 100e6, 30)
    return f, z["v(p)"]


def ngspice_writes(tmp_path, body, commands):
    """Run ngspice in batch mode with ``commands`` after an AC sweep matching ``reference``."""
    exe = require_ngspice()
    deck = tmp_path / "deck.cir"
    deck.write_text(f"* bench\n{body}.control\noption numdgt=15\nac dec 30 1k 100meg\n{commands}\nquit\n"
                    f".endc\n.end\n")
    subprocess.run([exe, "-b", str(deck)], capture_output=True, text=True, timeout=120, cwd=tmp_path,
                   check=False)


def test_ngspice_print_of_voltage_and_source_current(tmp_path, reference):
    f, z = reference
    ngspice_writes(tmp_path, BENCH, f"print v(p) i(V1) > {tmp_path / 'print.txt'}")
    m = read_measurement(tmp_path / "print.txt")
    np.testing.assert_allclose(m.frequency, f, rtol=1e-12)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-6)  # ngspice AC analysis output
    assert "repeated-header" in m.provenance.steps[1]


def test_ngspice_print_of_an_impedance_expression(tmp_path, reference):
    f, z = reference
    ngspice_writes(tmp_path, BENCH, f"print v(p)/(-i(V1)) > {tmp_path / 'print.txt'}")
    m = read_measurement(tmp_path / "print.txt")
    np.testing.assert_allclose(m.impedance, z, rtol=1e-6)  # ngspice AC analysis output
    assert m.provenance.warnings == ()


@pytest.mark.parametrize("vectors", ["v(p)", "v(p) v(m)"])
def test_ngspice_wrdata_without_header_by_position(tmp_path, reference, vectors):
    f, z = reference
    ngspice_writes(tmp_path, ALONE, f"wrdata {tmp_path / 'wr.txt'} {vectors}")
    path = tmp_path / "wr.txt"
    with pytest.raises(InputError, match=r"--map frequency=#1 --map z_real=#2 --map z_imag=#3"):
        read_measurement(path)
    m = read_measurement(path, ReadOptions(column_map={"frequency": "#1", "z_real": "#2", "z_imag": "#3"}))
    np.testing.assert_allclose(m.frequency, f, rtol=1e-12)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-6)  # ngspice AC analysis output
