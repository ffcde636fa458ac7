"""The fitted model written as Touchstone and read back with scikit-rf."""

import numpy as np
import pytest
import skrf

from fitz_tool.cli import main
from fitz_tool.fitting.least_squares import fit
from fitz_tool.measurement import Measurement
from fitz_tool.outputs.touchstone import model_network, to_touchstone
from fitz_tool.readers import ReadOptions, read_measurement

F = np.geomspace(1e6, 1e9, 60)
W = 2 * np.pi * F
# A 10 nH choke, 0.3 ohm, 0.2 pF across it (only to have a fit; exports checked against its own model)
TRUE = 1 / (1 / (0.3 + 1j * W * 10e-9) + 1j * W * 0.2e-12)


@pytest.fixture(scope="module")
def result():
    rng = np.random.default_rng(3)
    z = TRUE * np.exp(1e-3 * (rng.standard_normal(F.size) + 1j * rng.standard_normal(F.size)))
    return fit(Measurement(F, z), "(Rs + L1) || Cp")


def test_reflection_export_reads_back_as_the_model_impedance(result, tmp_path):
    path = tmp_path / "model.s1p"
    path.write_text(to_touchstone(result, path))
    back = skrf.Network(str(path))  # scikit-rf reads the file back
    np.testing.assert_allclose(back.f, F, rtol=1e-12)
    np.testing.assert_allclose(back.z[:, 0, 0], result.model_impedance(F), rtol=1e-9)
    text = path.read_text()
    assert "# Hz S RI R 50" in text.replace("HZ", "Hz").replace("hz", "Hz")
    assert "reference impedance 50 ohm" in text and "(Rs + L1) || Cp" in text


@pytest.mark.parametrize("through", ["series", "shunt"])
def test_two_port_export_follows_the_through_relations(result, tmp_path, through):
    path = tmp_path / f"{through}.s2p"
    path.write_text(to_touchstone(result, path, through=through))
    back = skrf.Network(str(path))
    z, z0 = result.model_impedance(F), 50.0
    # series-through and shunt-through relations (common practice, no source)
    s21 = 2 * z0 / (z + 2 * z0) if through == "series" else 2 * z / (2 * z + z0)
    s11 = z / (z + 2 * z0) if through == "series" else -z0 / (2 * z + z0)
    np.testing.assert_allclose(back.s[:, 1, 0], s21, rtol=1e-9)
    np.testing.assert_allclose(back.s[:, 0, 0], s11, rtol=1e-9)
    np.testing.assert_allclose(back.s[:, 0, 1], back.s[:, 1, 0], rtol=1e-12)  # reciprocal
    again = read_measurement(path, ReadOptions(through=through))  # and our own reader inverts it
    np.testing.assert_allclose(again.impedance, z, rtol=1e-8)


def test_curve_band_sets_the_exported_frequencies(tmp_path):
    part = tmp_path / "part.s1p"
    media = skrf.media.DefinedGammaZ0(skrf.Frequency.from_f(F, unit="Hz"), z0=50)
    media.load(skrf.tlineFunctions.zl_2_Gamma0(50, TRUE)).write_touchstone(str(part.with_suffix("")))
    out = tmp_path / "model.s2p"
    code = main(["fit", str(part), "--model", "(Rs + L1) || Cp", "--through", "shunt",
                 "--touchstone", str(out), "--curve-band", "100k:3G:201"])
    assert code == 0
    back = skrf.Network(str(out))
    assert back.frequency.npoints == 201
    assert back.f[0] == pytest.approx(1e5) and back.f[-1] == pytest.approx(3e9)
    assert np.allclose(np.diff(np.log(back.f)), np.log(3e9 / 1e5) / 200)


@pytest.mark.parametrize("extra, message", [
    (["--touchstone", "m.s2p"], "needs --through"),
    (["--touchstone", "m.txt"], "name the file .s1p"),
    (["--curve-band", "1M:1G:11"], "give --touchstone too"),
    (["--touchstone", "m.s1p", "--curve-band", "1M:1G"], "expected FMIN:FMAX:POINTS"),
    (["--touchstone", "m.s1p", "--curve-band", "1G:1M:11"], "FMIN < FMAX"),
])
def test_bad_export_options_are_one_line_errors(tmp_path, capsys, extra, message):
    part = tmp_path / "part.s1p"
    media = skrf.media.DefinedGammaZ0(skrf.Frequency.from_f(F, unit="Hz"), z0=50)
    media.load(skrf.tlineFunctions.zl_2_Gamma0(50, TRUE)).write_touchstone(str(part.with_suffix("")))
    extra = [str(tmp_path / e) if e.startswith("m.") else e for e in extra]
    code = main(["fit", str(part), "--model", "Rs + L1", *extra])
    err = capsys.readouterr().err
    assert code != 0 and message in err and len(err.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["part.s1p"]


def test_model_network_refuses_a_two_port_without_through(result):
    from fitz_tool.exceptions import InputError

    with pytest.raises(InputError, match="--through"):
        model_network(result, nports=2)
