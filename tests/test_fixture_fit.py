"""A part behind a fixture, with open and short standards, read from Touchstone files, compensated and fitted.

The bench is simulated with scikit-rf network cascades (analyzer - series leads - shunt pads - part), noise
added in S11; the fitted values must be the part's, not the part's plus the fixture's.
"""

import numpy as np
import pytest
import skrf

from fitz_tool.corrections import Corrections, apply_corrections
from fitz_tool.fitting.least_squares import fit
from fitz_tool.readers.touchstone import read_touchstone

FREQ = skrf.Frequency(1, 1000, 161, "MHz", sweep_type="log")
MED = skrf.media.DefinedGammaZ0(FREQ, z0=50)
W = 2 * np.pi * FREQ.f
PART = {"Rs": 0.04, "Ls": 0.7e-9, "C1": 1.0e-9}  # a 1 nF snubber capacitor
LEADS = {"R": 0.025, "L": 1.5e-9}  # fixture series leads
PADS = {"G": 2e-6, "C": 0.9e-12}  # fixture pads, across the part


def one_port(z: np.ndarray) -> skrf.Network:
    return MED.load(skrf.tlineFunctions.zl_2_Gamma0(50, z))


def bench_file(tmp_path, name: str, termination: skrf.Network, rng: np.random.Generator, noise: float) -> str:
    """Touchstone file of ``termination`` seen through the fixture, complex noise of std ``noise`` in S11."""
    leads = MED.resistor(LEADS["R"] + 1j * W * LEADS["L"])
    pads = MED.shunt(one_port(1 / (PADS["G"] + 1j * W * PADS["C"])))
    fixture = leads ** pads
    network = fixture ** termination  # scikit-rf cascade
    s11 = network.s[:, 0, 0]
    network.s[:, 0, 0] = s11 + noise * (rng.standard_normal(s11.shape) + 1j * rng.standard_normal(s11.shape))
    network.name = name
    path = tmp_path / f"{name}.s1p"
    path.write_text(network.write_touchstone(return_string=True, form="ri"))
    return str(path)


def fitted(measurement) -> dict[str, tuple[float, float]]:
    result = fit(measurement, "Rs + Ls + C1")
    return {name: (p.value, p.stderr) for name, p in result.parameters.items()}


def test_compensated_fit_gives_the_part_not_the_part_plus_fixture(tmp_path):
    rng = np.random.default_rng(20)
    part_z = PART["Rs"] + 1j * W * PART["Ls"] + 1 / (1j * W * PART["C1"])
    raw = read_touchstone(bench_file(tmp_path, "snubber", one_port(part_z), rng, 1e-4), None)
    open_ = read_touchstone(bench_file(tmp_path, "open", MED.open(), rng, 1e-5), None)
    short = read_touchstone(bench_file(tmp_path, "short", MED.short(), rng, 1e-5), None)
    compensated = apply_corrections(raw, Corrections(open=open_, short=short))

    values = fitted(compensated)
    # The simulated part (scikit-rf cascade): within 4 standard errors and a small relative band.
    for name, tolerance in (("Rs", 0.03), ("Ls", 0.003), ("C1", 0.001)):
        value, stderr = values[name]
        assert abs(value - PART[name]) < 4 * stderr, name
        assert value == pytest.approx(PART[name], rel=tolerance), name

    uncorrected = fitted(raw)
    # Without compensation the leads add in series (scikit-rf cascade): ESL and ESR are the sum.
    assert uncorrected["Ls"][0] == pytest.approx(PART["Ls"] + LEADS["L"], rel=0.02)
    assert uncorrected["Rs"][0] == pytest.approx(PART["Rs"] + LEADS["R"], rel=0.1)
    assert abs(uncorrected["Ls"][0] - PART["Ls"]) > 50 * uncorrected["Ls"][1]
