"""Snapshot of the terminal report of one bundled sample (the bulk capacitor on an impedance analyzer).

The layout and wording are compared line by line with every number replaced by ``#``, so a change in the last
digit of a fitted value does not break the snapshot; the values are checked for their
engineering-notation form only (the bundled samples are demo data, not check values).
"""

from __future__ import annotations

import contextlib
import io
import re
from pathlib import Path

from fitz_tool.cli import main

SAMPLE = Path(__file__).resolve().parent.parent / "sample_measurements" / "bulk_capacitor_analyzer.csv"

#: The head of the report, numbers as "#". Printed to a stream without an encoding, so in the ASCII spelling.
SNAPSHOT = """\
Read: impedance magnitude and phase, # points, # Hz to # MHz
Model: Rs + Ls + C#  (given by the user)
Verdict: converged; residual scatter # % of |Z|, # deg (RMS); no flags

Parameters:
  name  value                 note
  ----  --------------------  ----
  Rs    # mohm +/- # %
  Ls    # nH +/- # %
  C#    # uF +/- # %

Design values:
  SRF (series, in the sweep): # kHz +/- # %"""

SECTIONS = ["Parameters:", "Design values:", "Fit quality:", "Flags:", "How the data was read and corrected:",
            "Safety:"]


def _numbers_as_hash(text: str) -> str:
    return re.sub(r"[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?", "#", text)


def _report() -> str:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["fit", str(SAMPLE), "--model", "Rs + Ls + C1", "--quiet"]) == 0
    return out.getvalue()


def test_terminal_report_snapshot_of_the_bulk_capacitor():
    text = _report()
    lines = text.splitlines()
    assert lines[0] == f"Part: {SAMPLE}"
    head = "\n".join(lines[1:1 + SNAPSHOT.count("\n") + 1])
    assert _numbers_as_hash(head) == SNAPSHOT
    # results first, provenance last
    positions = [next(i for i, line in enumerate(lines) if line.startswith(s)) for s in SECTIONS]
    assert positions == sorted(positions)
    assert "reduced chi-square" not in text and "termination" not in text and "z_polar" not in text
    # the values themselves are the fit tests' business (against outside references); here only their form:
    # value, prefix and unit, then a relative uncertainty of two significant digits
    for name in ("Rs", "Ls", "C1"):
        assert re.search(rf"^  {name}\s+\d+\.\d+ (mohm|nH|uF) \+/- \d(\.\d)?\d* %$", text, re.M), name
