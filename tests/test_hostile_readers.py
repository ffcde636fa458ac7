"""Hostile bench files: Touchstone validation, no-reading markers, inf cells, long lines, absurd values."""

import time

import numpy as np
import pytest
import skrf

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

SHUNT = ReadOptions(through="shunt")


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return path


ROWS_1PORT = [(1.0, 0.5, 0.1), (2.0, 0.4, 0.2), (3.0, 0.3, 0.3), (4.0, 0.2, 0.35)]


def test_a_one_port_out_of_order_is_sorted_with_a_counted_warning(tmp_path):
    shuffled = [ROWS_1PORT[k] for k in (2, 0, 3, 1)]
    path = write(tmp_path, "shuffled.s1p",
                 "# MHz S RI R 50\n" + "".join(f"{f} {a} {b}\n" for f, a, b in shuffled))
    sorted_path = write(tmp_path, "sorted.s1p",
                        "# MHz S RI R 50\n" + "".join(f"{f} {a} {b}\n" for f, a, b in ROWS_1PORT))
    measurement = read_measurement(path)
    # scikit-rf reading the same rows in order, with its own s2z (reference library)
    reference = skrf.Network(str(sorted_path))
    np.testing.assert_allclose(measurement.frequency, reference.f)
    np.testing.assert_allclose(measurement.impedance, reference.z[:, 0, 0], rtol=1e-12)
    assert any("sorted the rows into increasing frequency (2 row(s) were out of order, first at row 3)" in w
               for w in measurement.provenance.warnings)


def two_port_rows(frequencies):
    return "".join(f"{f} 0.1 0 0.9 0.1 0.9 0.1 0.1 0\n" for f in frequencies)


def test_a_two_port_with_falling_frequencies_is_refused_not_read_as_noise(tmp_path):
    # 12 rows, descending: the Touchstone 1.x rule would read rows 2-12 as noise data and use one row
    path = write(tmp_path, "falling.s2p", "# MHz S RI R 50\n" + two_port_rows(range(12, 0, -1)))
    with pytest.raises(InputError, match=r"row 3: frequency falls below the row before it; a .s2p"):
        read_measurement(path, SHUNT)


def test_two_port_noise_rows_after_the_data_are_still_accepted(tmp_path):
    noise = "0.5 1.2 0.3 45 0.4\n1.0 1.3 0.3 50 0.4\n"  # Touchstone 1.x noise block (5 values per row)
    path = write(tmp_path, "noise.s2p", "# MHz S RI R 50\n" + two_port_rows([1, 2, 3]) + noise)
    assert len(read_measurement(path, SHUNT)) == 3


@pytest.mark.parametrize("name, text, message", [
    ("negative.s1p", "# MHz S RI R 50\n-1 0.1 0\n2 0.1 0\n", r"row 2, column 1: negative frequency -1"),
    ("ma.s1p", "# MHz S MA R 50\n1 -0.5 10\n2 0.5 10\n", r"row 2, column 2: magnitude -0.5 is negative"),
    ("rnan.s1p", "# MHz S RI R nan\n1 0.1 0\n2 0.1 0\n", r"reference R nan is not a resistance"),
    ("rinf.s1p", "# MHz S RI R inf\n1 0.1 0\n2 0.1 0\n", r"reference R inf is not a resistance"),
    ("db.s1p", "# MHz S DB R 50\n1 1e308 10\n2 -3 10\n", r"row 2, column 2: 1e\+308 dB is not an S-p"),
    ("hugef.s1p", "# Hz S RI R 50\n1 0.1 0\n1e308 0.1 0\n", r"row 3, column 1: frequency 1e\+308 Hz is"),
    ("marker.s1p", "# MHz S RI R 50\n1 9.9E37 0\n2 0.1 0\n", r"row 2, column 2: 9.9e\+37 is not an S-param"),
    ("count.s1p", "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n"
                  "[Network Data]\n1 0.1 0\n2 0.1 0\n[End]\n", r"says 3 but the file has 2 rows"),
    ("repeat.s2p", "# MHz S RI R 50\n" + two_port_rows([1, 2, 2]), r"frequency 2 already given in row 3"),
])
def test_nonsense_touchstone_values_are_refused_with_row_and_column(tmp_path, name, text, message):
    with pytest.raises(InputError, match=message):
        read_measurement(write(tmp_path, name, text), SHUNT)


def test_a_touchstone_2_file_reads_as_scikit_rf_reads_it(tmp_path):
    text = ("! comment\n[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 4\n"
            "[Network Data]\n" + "".join(f"{f} {a} {b} ! note\n" for f, a, b in ROWS_1PORT) + "[End]\n")
    path = write(tmp_path, "v2.s1p", text)
    reference = skrf.Network(str(path))  # scikit-rf on the original text (reference library)
    np.testing.assert_allclose(read_measurement(path).impedance, reference.z[:, 0, 0], rtol=1e-12)


def test_a_200_kB_comment_line_no_longer_stalls_the_reader(tmp_path):
    text = "!" + "c" * 200_000 + "\n# MHz S RI R 50\n" + "".join(f"{f} {a} {b}\n" for f, a, b in ROWS_1PORT)
    start = time.perf_counter()
    measurement = read_measurement(write(tmp_path, "comment.s1p", text))
    assert time.perf_counter() - start < 5  # was about a minute inside scikit-rf's comment parsing
    assert len(measurement) == 4


TABLE = "Frequency (Hz),|Z| (ohm),Phase (deg)\n1000,1.0,10\n2000,2.0,20\n3000,{cell},30\n4000,4.0,40\n"


@pytest.mark.parametrize("cell", ["9.9E37", "9.91E+37", "-9.9e37", "1e308", "inf", "-Infinity"])
def test_overflow_markers_and_inf_cells_are_counted_as_no_reading(tmp_path, cell):
    measurement = read_measurement(write(tmp_path, "bench.csv", TABLE.format(cell=cell)))
    assert list(measurement.frequency) == [1000.0, 2000.0, 4000.0]
    np.testing.assert_allclose(np.abs(measurement.impedance), [1.0, 2.0, 4.0])
    assert any("dropped 1 row" in w and "no-reading" in w for w in measurement.provenance.warnings)


def test_a_line_beyond_the_limit_is_named(tmp_path, capsys):
    path = write(tmp_path, "long.csv", TABLE.format(cell="3.0").replace("3000,", "3000," + "7" * 200_000, 1))
    assert main(["inspect", str(path)]) == 2
    err = capsys.readouterr().err
    assert "line 4 is 200011 characters long; the limit is 100,000" in err and err.count("\n") == 1


@pytest.mark.parametrize("row, message", [
    ("3000,1e30,30", r"\|Z\| = 1e\+30 ohm at 3000 Hz is outside"),
    ("1e30,3.0,30", r"frequency 1e\+30 Hz is outside"),
])
def test_absurd_but_finite_values_are_refused(tmp_path, row, message):
    with pytest.raises(InputError, match=message):
        read_measurement(write(tmp_path, "bench.csv", TABLE.format(cell="3.0").replace("3000,3.0,30", row)))
