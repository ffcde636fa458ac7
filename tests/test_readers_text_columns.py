"""Text columns beside the numbers (status, range, comment, timestamps) and the rows a status word marks bad.

Check values: an impedance computed here with numpy (a 1 ohm + 10 uH part with 50 pF across it), written
into the layout under test and read back (a round trip against an independent computation).
"""

import numpy as np
import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.array([1e3, 1e4, 1e5, 1e6, 1e7])
W = 2 * np.pi * F
Z = 1 / (1 / (1.0 + 1j * W * 10e-6) + 1j * W * 50e-12)


def _rows(status=("OK",) * 5, delimiter=",", decimal="."):
    out = []
    for k, (f, z) in enumerate(zip(F, Z, strict=True)):
        cells = [f"2026-12-01 10:00:{k:02d}", f"{f:.17g}", f"{abs(z):.17g}",
                 f"{np.degrees(np.angle(z)):.17g}", status[k], "AUTO", "" if k % 2 else "sweep A"]
        cells[1:4] = [c.replace(".", decimal) for c in cells[1:4]]
        out.append(delimiter.join(cells))
    return out


HEADER = ["Timestamp", "Frequency (Hz)", "|Z| (Ohm)", "Phase (deg)", "Status", "Range", "Comment"]


@pytest.mark.parametrize(("delimiter", "decimal"), [(",", "."), (";", ","), ("\t", "."), ("\t", ",")])
def test_text_columns_are_ignored_and_recorded(tmp_path, delimiter, decimal):
    path = tmp_path / "t.csv"
    path.write_text("\n".join(["Bench export", delimiter.join(HEADER), *_rows(delimiter=delimiter,
                                                                                decimal=decimal)]) + "\n")
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.ignored_columns == ("Timestamp", "Status", "Range", "Comment")
    assert any("ignored column(s)" in s and "'Comment'" in s for s in m.provenance.steps)
    assert m.provenance.warnings == ()


def test_status_words_drop_rows_with_a_counted_warning(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("\n".join([",".join(HEADER), *_rows(status=("OK", "OVLD", "OK", "ERR", "ok"))]) + "\n")
    m = read_measurement(path)
    np.testing.assert_allclose(m.frequency, F[[0, 2, 4]], rtol=1e-15)
    np.testing.assert_allclose(m.impedance, Z[[0, 2, 4]], rtol=1e-12)
    assert any("dropped 2 row(s) marked as not valid in the status column 'Status' (line(s) 3, 5)" in w
               for w in m.provenance.warnings)


def test_unknown_status_word_is_kept_and_named(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("\n".join([",".join(HEADER), *_rows(status=("OK", "WOBBLY", "OK", "OK", "OK"))]) + "\n")
    m = read_measurement(path)
    assert len(m) == 5
    assert any("'wobbly'" in w and "kept" in w for w in m.provenance.warnings)


def test_status_column_named_by_map_and_text_columns_on_the_map_route(tmp_path):
    path = tmp_path / "t.csv"
    header = ["when", "a", "b", "c", "flagword", "r", "note"]
    path.write_text("\n".join([",".join(header), *_rows(status=("OK", "OK", "BAD", "OK", "OK"))]) + "\n")
    options = ReadOptions(column_map={"frequency": "a", "z_magnitude": "b", "z_phase": "c",
                                      "status": "flagword"})
    m = read_measurement(path, options)
    np.testing.assert_allclose(m.impedance, Z[[0, 1, 3, 4]], rtol=1e-12)
    assert m.provenance.ignored_columns == ("when", "flagword", "r", "note")
    with pytest.raises(InputError, match="already used"):
        read_measurement(path, ReadOptions(column_map={**options.column_map, "status": "b"}))


def test_headerless_table_with_a_text_column_by_position(tmp_path):
    path = tmp_path / "t.txt"
    path.write_text("\n".join(f"{f:.17g} {z.real:.17g} {z.imag:.17g} OK" for f, z in zip(F, Z, strict=True)))
    m = read_measurement(path, ReadOptions(column_map={"frequency": "#1", "z_real": "#2", "z_imag": "#3"}))
    np.testing.assert_allclose(m.impedance, Z, rtol=1e-12)
    assert m.provenance.ignored_columns == ("#4",)


def test_text_in_a_used_column_is_still_an_error_naming_line_and_column(tmp_path):
    path = tmp_path / "t.csv"
    rows = _rows()
    rows[2] = rows[2].replace(f"{abs(Z[2]):.17g}", "OVLD")
    path.write_text("\n".join([",".join(HEADER), *rows]) + "\n")
    with pytest.raises(InputError, match=r"line 4, column '\|Z\| \(Ohm\)': 'OVLD' is not a number"):
        read_measurement(path)


def test_cli_reads_a_file_with_text_columns(tmp_path, capsys):
    path = tmp_path / "t.csv"
    path.write_text("\n".join([",".join(HEADER), *_rows(status=("OK", "OVLD", "OK", "OK", "OK"))]) + "\n")
    assert main(["inspect", str(path)]) == 0
