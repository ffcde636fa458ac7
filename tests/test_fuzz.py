"""Property-based fuzzing of readers, Touchstone files, the grammar and the options (see fuzz_cases.py).

The property: whatever arrives, the command line either succeeds with readings equal to the truth of the
clean rows, or refuses with one line; never a traceback, a hang, a changed input or a half-written output.
"""

import tempfile
from pathlib import Path

import pytest
from fuzz_cases import FAMILIES, run_case
from hypothesis import given


@pytest.mark.parametrize("family", list(FAMILIES))
def test_hostile_inputs_succeed_truthfully_or_are_refused_in_one_line(family):
    @given(case=FAMILIES[family]())
    def check(case):
        with tempfile.TemporaryDirectory() as folder:
            outcome = run_case(case, Path(folder))
        assert outcome.label in ("ok", "refused"), (outcome, case.argv[:6], case.note)

    check()
