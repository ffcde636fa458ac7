"""The Measurement object guards its invariants and records its history."""

import numpy as np
import pytest

from fitz_tool.exceptions import InputError
from fitz_tool.measurement import Measurement, Provenance


def test_measurement_is_read_only_and_records_selection():
    m = Measurement(np.array([1e3, 1e4, 1e5]), np.array([1 + 1j, 2 + 2j, 3 + 3j]),
                    provenance=Provenance("a.csv"))
    with pytest.raises(ValueError):
        m.frequency[0] = 5.0
    kept = m.select(m.frequency > 2e3, "kept points above 2 kHz")
    assert len(kept) == 2
    assert kept.provenance.steps == ("kept points above 2 kHz",)
    assert m.provenance.steps == ()


def test_polar_views_follow_the_inductive_positive_convention():
    # Z = j w L is inductive: phase +90 deg, positive reactance
    # (e^{+jwt} convention, common practice, no source).
    f = np.array([1e3])
    m = Measurement(f, 1j * 2 * np.pi * f * 1e-3)
    assert m.phase_deg[0] == pytest.approx(90.0)
    assert m.reactance[0] == pytest.approx(2 * np.pi * 1e3 * 1e-3)


@pytest.mark.parametrize(
    ("frequency", "impedance", "message"),
    [
        ([1e3, 1e3], [1, 1], "ascending"),
        ([2e3, 1e3], [1, 1], "ascending"),
        ([0.0, 1e3], [1, 1], "> 0"),
        ([1e3, 2e3], [1, np.nan], "non-finite"),
        ([], [], "no data"),
    ],
)
def test_bad_arrays_are_refused(frequency, impedance, message):
    with pytest.raises(InputError, match=message):
        Measurement(np.array(frequency, float), np.array(impedance, complex))
