"""inspect on S-parameter data: lossless reflections and pure delays named, Lin-KK advice worded right.

Outside references: scikit-rf's bundled example files (a waveguide delay short, a measured ring-slot
resonator, a flush short) and scikit-rf transmission-line networks.
"""

from pathlib import Path

import numpy as np
import pytest
import skrf

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError
from fitz_tool.inspection import summarize
from fitz_tool.measurement import Measurement, Provenance
from fitz_tool.readers import read_measurement

DATA = Path(skrf.__file__).parent / "data"
FREQ = skrf.Frequency(0.1, 6, 201, "GHz")
C = 299792458.0
LINE = skrf.media.DefinedGammaZ0(FREQ, z0=50, gamma=1j * FREQ.w / C)  # lossless TEM line, air


def test_scikit_rf_delay_short_is_lossless_and_not_called_inconsistent():
    s = summarize(read_measurement(DATA / "delay_short.s1p"))
    assert s.reflection.lossless and s.reflection.foster_ok  # a lossless passive one-port (Foster)
    assert "basis is too small" in s.kramers_kronig_advice
    assert "consistent by Foster's reactance theorem" in s.kramers_kronig_advice
    assert "inconsistent" not in s.kramers_kronig_advice.replace("consistent by", "")


def test_scikit_rf_ring_slot_resonator_is_too_rich_for_the_basis_not_inconsistent():
    s = summarize(read_measurement(DATA / "ring slot measured.s1p"))
    assert not s.reflection.lossless
    assert len(s.resonances) == 2
    assert "basis is too small for this response (2 resonances" in s.kramers_kronig_advice


@pytest.mark.parametrize("kind, termination", [("delay_short", "short"), ("delay_open", "open")])
def test_a_line_of_5_cm_is_named_a_pure_delay(tmp_path, kind, termination):
    path = tmp_path / f"{kind}.s1p"
    getattr(LINE, kind)(0.05, unit="m").write_touchstone(str(path.with_suffix("")))
    s = summarize(read_measurement(path))
    # round trip 2 d / c = 333.56 ps (common practice, no source)
    assert s.reflection.delay == pytest.approx(2 * 0.05 / C, rel=1e-6)
    assert s.reflection.termination == termination


def test_a_lossless_reflection_turning_anticlockwise_is_inconsistent():
    f = FREQ.f
    s11 = -np.exp(+2j * np.pi * f * 300e-12)  # a "delay" running backwards: no passive part does this
    z = 50 * (1 + s11) / (1 - s11)
    keep = np.abs(1 - s11) > 1e-3
    m = Measurement(f[keep], z[keep], provenance=Provenance(form="touchstone_s11",
                                                             columns={"reference": "50 ohm"}))
    s = summarize(m)
    assert s.reflection.lossless and not s.reflection.foster_ok  # Foster's reactance theorem
    assert "inconsistent: a lossless reflection that turns anticlockwise" in s.kramers_kronig_advice


def test_a_delayed_current_channel_is_still_called_inconsistent():
    f = np.geomspace(1e3, 1e7, 100)
    w = 2 * np.pi * f
    z = (1 / (1 / (0.5 + 1j * w * 22e-6) + 1j * w * 30e-12)) * np.exp(1j * w * 3e-9)
    s = summarize(Measurement(f, z))
    assert s.reflection is None
    assert s.kramers_kronig_advice.startswith("the data look inconsistent")


def test_a_flush_short_file_is_named_as_such(capsys):
    with pytest.raises(InputError, match="is a short circuit"):
        read_measurement(DATA / "short.s1p")
    assert main(["inspect", str(DATA / "short.s1p")]) == 2
    assert "short circuit (S11 = -1, Z = 0)" in capsys.readouterr().err


def test_noise_on_a_slowly_turning_delay_short_is_not_read_as_anticlockwise():
    rng = np.random.default_rng(5)
    f = np.linspace(1e9, 1.2e9, 400)
    s11 = -np.exp(-2j * np.pi * f * 50e-12) * np.exp(1j * 2e-3 * rng.standard_normal(f.size))
    z = 50 * (1 + s11) / (1 - s11)
    m = Measurement(f, z, provenance=Provenance(form="touchstone_s11", columns={"reference": "50 ohm"}))
    # phase step 0.0016 rad per point against 0.002 rad of noise: raw steps go backwards, the part does not
    assert np.any(np.diff(np.unwrap(np.angle(s11))) > 0)
    assert summarize(m).reflection.foster_ok
