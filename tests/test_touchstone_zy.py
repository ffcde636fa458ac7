"""Touchstone input beyond S: Z- and Y-parameter files, and 2-port rows wrapped over several lines.

Reference: the Touchstone 1.1 file format (from memory): Z and Y data are normalized to the reference R of
the option line (z = Z / R, y = Y R); a 2-port row (frequency and four pairs) may continue on further lines.
The part's network is built with scikit-rf.
"""

import numpy as np
import pytest
import skrf

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

FREQ = skrf.Frequency(1, 100, 7, "MHz", sweep_type="log")
MED = skrf.media.DefinedGammaZ0(FREQ, z0=50)
W = 2 * np.pi * FREQ.f
PART = 3.0 + 1j * W * 220e-9  # 3 ohm + 220 nH


def rows(matrices: np.ndarray, wrap: bool = False) -> list[str]:
    """Touchstone data rows (RI, order 11 21 12 22, frequency in MHz), optionally wrapped after 2 pairs."""
    lines = []
    for f, m in zip(FREQ.f, matrices, strict=True):
        pairs = [f"{float(v.real)!r} {float(v.imag)!r}" for v in (m[0, 0], m[1, 0], m[0, 1], m[1, 1])]
        if wrap:
            lines += [f"{float(f) / 1e6!r} " + " ".join(pairs[:2]), "   " + " ".join(pairs[2:])]
        else:
            lines.append(f"{float(f) / 1e6!r} " + " ".join(pairs))
    return lines


@pytest.mark.parametrize("through", ["series", "shunt"])
def test_z_parameter_file_gives_the_part(tmp_path, through):
    network = MED.resistor(PART) if through == "series" else MED.shunt(MED.load(
        skrf.tlineFunctions.zl_2_Gamma0(50, PART)))
    if through == "series":  # a series element has no Z matrix; give it 1 kohm pads to ground
        network = MED.shunt_resistor(1e3) ** network ** MED.shunt_resistor(1e3)
    path = tmp_path / "part.s2p"
    path.write_text("! Z parameters\n# MHz Z RI R 50\n" + "\n".join(rows(network.z / 50)) + "\n")
    m = read_measurement(path, ReadOptions(through=through))
    expected = {"series": 2 * 50 * (1 - network.s[:, 1, 0]) / network.s[:, 1, 0],
                "shunt": 25 * network.s[:, 1, 0] / (1 - network.s[:, 1, 0])}[through]
    np.testing.assert_allclose(m.impedance, expected, rtol=1e-9)  # the S21 relations on scikit-rf's S
    if through == "shunt":
        np.testing.assert_allclose(m.impedance, PART, rtol=1e-9)
    assert any("Z parameters converted to S" in s for s in m.provenance.steps)


def test_y_parameter_file_gives_the_part(tmp_path):
    network = MED.resistor(PART)  # Y = [[1, -1], [-1, 1]] / Z
    path = tmp_path / "part.s2p"
    path.write_text("# MHz Y RI R 50\n" + "\n".join(rows(network.y * 50)) + "\n")
    m = read_measurement(path, ReadOptions(through="series"))
    np.testing.assert_allclose(m.impedance, PART, rtol=1e-9)  # the series part, 3 ohm + 220 nH
    assert any("Y = y / R" in s for s in m.provenance.steps)


def test_one_port_z_file(tmp_path):
    path = tmp_path / "part.s1p"
    body = [f"{float(f) / 1e6!r} {float((z / 50).real)!r} {float((z / 50).imag)!r}"
            for f, z in zip(FREQ.f, PART, strict=True)]
    path.write_text("# MHz Z RI R 50\n" + "\n".join(body) + "\n")
    np.testing.assert_allclose(read_measurement(path).impedance, PART, rtol=1e-9)


def test_wrapped_two_port_rows_read_like_single_lines(tmp_path):
    network = MED.shunt(MED.load(skrf.tlineFunctions.zl_2_Gamma0(50, PART)))
    flat, wrapped = tmp_path / "flat.s2p", tmp_path / "wrapped.s2p"
    flat.write_text("# MHz S RI R 50\n" + "\n".join(rows(network.s)) + "\n")
    wrapped.write_text("# MHz S RI R 50\n" + "\n".join(rows(network.s, wrap=True)) + "\n")
    a = read_measurement(flat, ReadOptions(through="shunt"))
    b = read_measurement(wrapped, ReadOptions(through="shunt"))
    np.testing.assert_array_equal(a.impedance, b.impedance)
    np.testing.assert_allclose(b.impedance, PART, rtol=1e-9)  # the shunt part (scikit-rf network)


def test_a_short_wrapped_row_is_named(tmp_path):
    network = MED.resistor(PART)
    lines = rows(network.s, wrap=True)
    lines[3] = lines[3].rsplit(" ", 2)[0]  # drop one pair of the second row's continuation
    path = tmp_path / "cut.s2p"
    path.write_text("# MHz S RI R 50\n" + "\n".join(lines) + "\n")
    with pytest.raises(InputError, match=r"rows 4-5 have 7 values"):
        read_measurement(path, ReadOptions(through="series"))


def test_a_one_port_file_named_s2p_is_still_recognised(tmp_path):
    path = tmp_path / "one.s2p"
    path.write_text("# MHz S RI R 50\n1 0.1 0.2\n2 0.1 0.2\n3 0.1 0.2\n")
    with pytest.raises(InputError, match=r"row 2 has 3 values.*1-port file"):
        read_measurement(path, ReadOptions(through="series"))
