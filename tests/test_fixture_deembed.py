"""Two-port open-short de-embedding: scikit-rf's own example data and a simulated pad fixture.

Outside references: scikit-rf's bundled example files ``ind.s2p`` (a 1 nH inductor between two pads),
``open.s2p`` and ``short.s2p`` (its pad dummies), and scikit-rf's ``OpenShort`` de-embedding of them;
simulated fixtures are scikit-rf network cascades.
"""

import json
from pathlib import Path

import numpy as np
import pytest
import skrf
from skrf.calibration.deembedding import OpenShort

from fitz_tool.cli import main
from fitz_tool.corrections import Corrections, apply_corrections
from fitz_tool.exceptions import InputError
from fitz_tool.fitting.least_squares import fit
from fitz_tool.fixtures import deembed_two_port, two_port_method
from fitz_tool.readers import ReadOptions, read_measurement

DATA = Path(skrf.__file__).parent / "data"
IND, OPEN, SHORT = (str(DATA / name) for name in ("ind.s2p", "open.s2p", "short.s2p"))


def skrf_inductance() -> float:
    """Inductance of the de-embedded part by scikit-rf's OpenShort: mean of Im(-1/Y21) / w."""
    part = OpenShort(skrf.Network(OPEN), skrf.Network(SHORT)).deembed(skrf.Network(IND))
    return float(np.mean((-1 / part.y[:, 1, 0]).imag / (2 * np.pi * part.f)))


def test_pad_inductor_de_embedded_matches_scikit_rf_open_short():
    reference = skrf_inductance()
    assert reference == pytest.approx(1e-9, rel=1e-4)  # scikit-rf's example: a 1 nH inductor
    m = deembed_two_port(IND, "series", open=OPEN, short=SHORT)
    result = fit(m, "Rs + L1")
    # scikit-rf example data and its OpenShort de-embedding
    assert result.parameters["L1"].value == pytest.approx(reference, rel=1e-3)
    assert result.parameters["Rs"].value < 1e-3  # the part is a pure inductance
    assert m.provenance.form == "touchstone_2port_series"
    assert any("two-port de-embedding on the full matrices" in s and "OpenShort" in s
               for s in m.provenance.steps)


def test_pad_inductor_through_the_command_line(capsys):
    code = main(["fit", IND, "--through", "series", "--open", OPEN, "--short", SHORT, "--model", "Rs + L1"])
    out = capsys.readouterr().out
    assert code == 0
    line = next(r for r in out.splitlines() if r.strip().startswith("L1"))
    value = float(line.split()[1]) * 1e-12  # printed in pH
    assert value == pytest.approx(skrf_inductance(), rel=1e-3)  # scikit-rf OpenShort
    assert "two-port de-embedding" in out


def test_swapped_pad_standards_are_refused_in_one_line(capsys):
    with pytest.raises(InputError, match="look swapped"):
        deembed_two_port(IND, "series", open=SHORT, short=OPEN)
    code = main(["fit", IND, "--through", "series", "--open", SHORT, "--short", OPEN, "--model", "L1"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1 and "look swapped" in err


def test_method_is_chosen_by_what_the_files_are(tmp_path):
    assert two_port_method(IND, {"open": OPEN, "short": SHORT}) == "two-port"
    assert two_port_method(IND, {"open": None}) is None
    one_port = tmp_path / "open.s1p"
    skrf.Network(OPEN).s11.write_touchstone(str(one_port))
    with pytest.raises(InputError, match="measure the standards the same way"):
        two_port_method(IND, {"open": str(one_port)})


# A simulated PCB fixture: 0.3 pF pads at each port, 0.8 nH + 30 mohm leads on each side, and a part
# of 2 ohm + 4.7 nH between them (scikit-rf media, 50 ohm).
FREQ = skrf.Frequency(0.1, 6, 120, "GHz", sweep_type="log")
MED = skrf.media.DefinedGammaZ0(FREQ, z0=50)
W = 2 * np.pi * FREQ.f
PAD_C, LEAD = 0.3e-12, 0.03 + 1j * W * 0.8e-9
PART = {"Rs": 2.0, "L1": 4.7e-9}


def _one_port(z: np.ndarray) -> skrf.Network:
    return MED.load(skrf.tlineFunctions.zl_2_Gamma0(50, z))


def fixture_files(tmp_path, rng, noise=2e-4):
    pad = MED.shunt_capacitor(PAD_C)
    lead = MED.resistor(LEAD)
    part = MED.resistor(PART["Rs"] + 1j * W * PART["L1"])
    dut = pad ** lead ** part ** lead ** pad  # scikit-rf cascade
    dut.s = dut.s + noise * (rng.standard_normal(dut.s.shape) + 1j * rng.standard_normal(dut.s.shape))
    side_open = _one_port(1 / (1j * W * PAD_C))
    side_short = _one_port(1 / (1j * W * PAD_C + 1 / LEAD))
    files = {}
    for name, network in (("dut", dut), ("open", skrf.network.two_port_reflect(side_open, side_open)),
                          ("short", skrf.network.two_port_reflect(side_short, side_short))):
        path = tmp_path / f"{name}.s2p"
        network.write_touchstone(str(path.with_suffix("")), form="ri")
        files[name] = str(path)
    return files


def test_simulated_pad_fixture_gives_the_part_within_two_standard_errors(tmp_path):
    files = fixture_files(tmp_path, np.random.default_rng(7))
    m = deembed_two_port(files["dut"], "series", open=files["open"], short=files["short"])
    result = fit(m, "Rs + L1")
    for name, truth in PART.items():  # the simulated part (scikit-rf cascade)
        p = result.parameters[name]
        assert abs(p.value - truth) < 2 * p.stderr, name
        assert p.value == pytest.approx(truth, rel=0.02), name
    raw = fit(read_measurement(files["dut"], ReadOptions(through="series")), "Rs + L1")
    assert raw.parameters["L1"].value > 1.2 * PART["L1"]  # without de-embedding the leads count


def test_simulated_pad_fixture_with_swapped_standards_is_refused(tmp_path):
    files = fixture_files(tmp_path, np.random.default_rng(7))
    with pytest.raises(InputError, match=r"look swapped: .* at 120 of 120 points"):
        deembed_two_port(files["dut"], "series", open=files["short"], short=files["open"])


def test_one_port_swapped_standards_are_refused():
    from fitz_tool.measurement import Measurement, Provenance

    f = FREQ.f
    # leads towards the analyzer, pads across the part
    z_short, z_open = LEAD, LEAD + 1 / (1j * W * PAD_C)
    part = LEAD + 1 / (1j * W * PAD_C + 1 / (PART["Rs"] + 1j * W * PART["L1"]))

    def m(z, name):
        return Measurement(f, z, provenance=Provenance(source=name))

    good = apply_corrections(m(part, "part.s1p"),
                             Corrections(open=m(z_open, "o.s1p"), short=m(z_short, "s.s1p")))
    # open/short removes a series-then-shunt fixture exactly (common practice, no source)
    np.testing.assert_allclose(good.impedance, PART["Rs"] + 1j * W * PART["L1"], rtol=1e-9)
    with pytest.raises(InputError, match=r"look swapped: \|Z\| of the short exceeds the open's"):
        apply_corrections(m(part, "part.s1p"),
                          Corrections(open=m(z_short, "s.s1p"), short=m(z_open, "o.s1p")))


def test_a_part_outside_its_standards_is_refused_or_counted():
    from fitz_tool.measurement import Measurement, Provenance

    f = FREQ.f
    n = f.size
    z_short = np.full(n, 1.0 + 0j)
    z_open = np.full(n, 1e4 + 0j)
    part = np.full(n, 100.0 + 0j)
    part[:3] = 0.5  # three band-edge points below the short

    def m(z, name):
        return Measurement(f, z, provenance=Provenance(source=name))

    kept = apply_corrections(m(part, "p"), Corrections(open=m(z_open, "o"), short=m(z_short, "s")))
    assert any("outside its open/short standards at 3 of 120 points" in w for w in kept.provenance.warnings)
    part = part.copy()
    part[:60] = 2e4  # half the band above the open: standards from another fixture
    with pytest.raises(InputError, match="not between the open and short standards at 60 of 120 points"):
        apply_corrections(m(part, "p"), Corrections(open=m(z_open, "o"), short=m(z_short, "s")))


def test_through_fixture_standards_take_the_one_port_path_and_say_so(tmp_path, capsys):
    # A series-through fixture: 0.5 nH leads either side; open = part removed, short = part replaced by a
    # through. The short passes signal, so each file becomes one series impedance and the one-port formula
    # removes the leads (series-through relation and open/short: common practice, no source).
    lead = MED.inductor(0.5e-9)
    part = MED.resistor(PART["Rs"] + 1j * W * PART["L1"])
    files = {}
    for name, middle in (("dut", part), ("open", MED.resistor(1e6)), ("short", MED.resistor(1e-9))):
        path = tmp_path / f"{name}.s2p"
        (lead ** middle ** lead).write_touchstone(str(path.with_suffix("")), form="ri")
        files[name] = str(path)
    assert two_port_method(files["dut"], {"open": files["open"], "short": files["short"]}) == "one-port"
    out = tmp_path / "fit.json"
    code = main(["fit", files["dut"], "--through", "series", "--open", files["open"], "--short",
                 files["short"], "--model", "Rs + L1", "--json", str(out)])
    assert code == 0, capsys.readouterr().err
    text = out.read_text()
    assert "one-port compensation chosen: a standard passes signal" in text
    value = json.loads(text)["parameters"]["L1"]["value"]
    assert value == pytest.approx(PART["L1"], rel=1e-3)  # leads removed (scikit-rf cascade)
