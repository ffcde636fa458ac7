"""Long columns of plain numbers are read in one pass; the values are those of the cell-by-cell rules."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fitz_tool.readers.delimited import TextTable, numeric_column, parse_number

number = st.floats(allow_nan=False, allow_infinity=False, width=64).map(lambda v: f"{v:.17g}")


def table(cells, decimal="."):
    return TextTable(headers=("x",), rows=tuple((c,) for c in cells), lines=tuple(range(2, 2 + len(cells))),
                     delimiter=";" if decimal == "," else ",", decimal=decimal, encoding="utf-8", notes=())


@settings(max_examples=100, deadline=None)
@given(st.lists(number, min_size=1, max_size=40), st.sampled_from([".", ","]),
       st.sampled_from(["", " ", "\t"]))
def test_one_pass_equals_cell_by_cell(values, decimal, pad):
    cells = [pad + (v.replace(".", ",") if decimal == "," else v) + pad for v in values]
    fast = numeric_column(table(cells, decimal), 0, "t.csv")
    slow = np.array([parse_number(c, decimal) for c in cells])
    np.testing.assert_array_equal(fast, slow)


def test_overflow_markers_and_missing_cells_keep_their_meaning():
    # 9.9E37 is the instrument's no-reading value (SCPI, from memory): NaN either way
    assert np.isnan(numeric_column(table(["1.5", "9.9E37"]), 0, "t.csv")[1])
    values = numeric_column(table(["1.5", "", "2"]), 0, "t.csv")
    assert np.isnan(values[1]) and values[2] == 2.0


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text(alphabet="0123456789+-.,eE \t", min_size=0, max_size=8), min_size=1, max_size=6),
       st.sampled_from([".", ","]))
def test_any_cell_of_number_characters_reads_as_the_cell_by_cell_rules_say(cells, decimal):
    # cells made only of the characters a plain number may hold (a lone sign, '1e', '1.2.3', '', blanks):
    # the one-pass reading gives the cell-by-cell value, or the same refusal
    from fitz_tool.exceptions import InputError

    try:
        slow = np.array([parse_number(c, decimal) for c in cells])
    except ValueError:
        with pytest.raises(InputError):
            numeric_column(table(cells, decimal), 0, "t.csv")
        return
    np.testing.assert_array_equal(numeric_column(table(cells, decimal), 0, "t.csv"), slow)
