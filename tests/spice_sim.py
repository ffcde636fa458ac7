"""Run ngspice (Debian package ``ngspice``) in batch mode as an independent reference for tests.

``ac_analysis`` runs an AC sweep of a netlist and returns the requested complex node voltages or branch
currents. When ngspice is missing the calling test is skipped, unless FITZ_REQUIRE_NGSPICE=1 (set by CI),
where it fails.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np
import pytest


def require_ngspice() -> str:
    path = shutil.which("ngspice")
    if path is None:
        message = "ngspice not installed (apt-get install -y ngspice)"
        if os.environ.get("FITZ_REQUIRE_NGSPICE") == "1":
            pytest.fail(message)
        pytest.skip(message)
    return path


def ac_analysis(netlist_body: str, vectors: list[str], fstart: float, fstop: float,
                points_per_decade: int = 20) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Simulate ``netlist_body`` (elements and subcircuits, no .end) with ``ac dec``.

    ``vectors`` are ngspice expressions such as ``"v(a)"`` or ``"i(vsense)"``. Returns frequency (Hz) and
    ``{vector: complex array}``. Uses ``option numdgt=15`` for full precision.
    """
    exe = require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "ac.txt"
        deck = (
            "* fitz_tool reference simulation\n"
            f"{netlist_body.strip()}\n"
            ".control\n"
            "option numdgt=15\n"
            f"ac dec {points_per_decade} {fstart:.15g} {fstop:.15g}\n"
            f"wrdata {out} {' '.join(vectors)}\n"
            "quit\n"
            ".endc\n"
            ".end\n"
        )
        deck_path = Path(tmp) / "deck.cir"
        deck_path.write_text(deck)
        run = subprocess.run([exe, "-b", str(deck_path)], capture_output=True, text=True, timeout=120)
        if not out.exists():
            raise RuntimeError(f"ngspice failed:\n{run.stdout}\n{run.stderr}")
        data = np.loadtxt(out)
    data = np.atleast_2d(data)
    frequency = data[:, 0]
    result = {}
    for k, name in enumerate(vectors):
        # wrdata writes, for each vector, the scale column then real and imaginary parts.
        result[name] = data[:, 3 * k + 1] + 1j * data[:, 3 * k + 2]
    return frequency, result
