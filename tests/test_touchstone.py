"""Touchstone reading: S to Z conversions against scikit-rf, noise carried through, bad files refused."""

import hashlib
from types import SimpleNamespace

import numpy as np
import pytest
import skrf

from fitz_tool.exceptions import InputError
from fitz_tool.readers.touchstone import (
    lnz_sensitivity,
    read_touchstone,
    s11_to_z,
    s21_series_to_z,
    s21_shunt_to_z,
)

SHUNT = SimpleNamespace(through="shunt")
SERIES = SimpleNamespace(through="series")


def random_impedances(rng: np.random.Generator, n: int) -> np.ndarray:
    """Passive impedances from 1 mohm to 10 kohm at any phase in (-90, 90) deg."""
    return 10 ** rng.uniform(-3, 4, n) * np.exp(1j * rng.uniform(-1.5, 1.5, n))


def frequency(n: int) -> skrf.Frequency:
    return skrf.Frequency(1, 500, n, "MHz", sweep_type="log")


def two_port_of(impedance: np.ndarray, through: str, z0: tuple[float, float]) -> np.ndarray:
    """S of a part in shunt or in series, built by scikit-rf from its ABCD matrix (a2s)."""
    abcd = np.zeros((impedance.size, 2, 2), complex)
    abcd[:, 0, 0] = abcd[:, 1, 1] = 1
    if through == "shunt":
        abcd[:, 1, 0] = 1 / impedance
    else:
        abcd[:, 0, 1] = impedance
    return skrf.network.a2s(abcd, z0=np.array(z0, float))


def test_reflection_conversion_matches_scikit_rf_for_random_loads():
    rng = np.random.default_rng(1)
    z = random_impedances(rng, 200)
    z0 = rng.uniform(10, 100, 200)
    gamma = skrf.tlineFunctions.zl_2_Gamma0(z0, z)
    # scikit-rf: load impedance -> reflection coefficient, then back through our conversion.
    np.testing.assert_allclose(s11_to_z(gamma, z0), z, rtol=1e-9)
    # Z = Z0 (1 + S11)/(1 - S11) (common practice, no source).
    np.testing.assert_allclose(s11_to_z(gamma, z0), z0 * (1 + gamma) / (1 - gamma), rtol=1e-9)


@pytest.mark.parametrize("through", ["shunt", "series"])
@pytest.mark.parametrize("z0", [(50.0, 50.0), (50.0, 75.0), (25.0, 100.0)])
def test_through_conversions_match_scikit_rf_two_ports(through, z0):
    rng = np.random.default_rng(2)
    z = random_impedances(rng, 200)
    s = two_port_of(z, through, z0)  # scikit-rf a2s (power waves, per-port references)
    convert = s21_shunt_to_z if through == "shunt" else s21_series_to_z
    np.testing.assert_allclose(convert(s[:, 1, 0], *z0), z, rtol=1e-9)


def test_equal_references_give_the_published_through_relations():
    rng = np.random.default_rng(3)
    z = random_impedances(rng, 50)
    med = skrf.media.DefinedGammaZ0(frequency(50), z0=50)
    # scikit-rf media: a shunt load and a series element in a 50 ohm line.
    shunt = med.shunt(med.load(skrf.tlineFunctions.zl_2_Gamma0(50, z))).s[:, 1, 0]
    series = med.resistor(z).s[:, 1, 0]
    # Published shunt-through Z = Z0/2 S21/(1 - S21) and series-through Z = 2 Z0 (1 - S21)/S21 (from memory).
    np.testing.assert_allclose(s21_shunt_to_z(shunt), 25 * shunt / (1 - shunt), rtol=1e-9)
    np.testing.assert_allclose(s21_shunt_to_z(shunt), z, rtol=1e-9)
    np.testing.assert_allclose(s21_series_to_z(series), 100 * (1 - series) / series, rtol=1e-9)
    np.testing.assert_allclose(s21_series_to_z(series), z, rtol=1e-9)


@pytest.mark.parametrize(("form", "convert"), [
    ("touchstone_s11", lambda s: s11_to_z(s, 50.0)),
    ("touchstone_s21_shunt", lambda s: s21_shunt_to_z(s, 50.0, 75.0)),
    ("touchstone_s21_series", lambda s: s21_series_to_z(s, 50.0, 75.0)),
])
def test_sigma_is_the_derivative_of_the_conversion(form, convert):
    # Analytic against numeric derivative of ln Z (common practice, no source: first-order propagation).
    rng = np.random.default_rng(4)
    s = 0.95 * np.sqrt(rng.uniform(0, 1, 100)) * np.exp(2j * np.pi * rng.uniform(0, 1, 100))
    h = 1e-7
    numeric = (np.log(convert(s + h)) - np.log(convert(s - h))) / (2 * h)
    np.testing.assert_allclose(lnz_sensitivity(form, s, 50.0, 75.0), np.abs(numeric), rtol=1e-5)


def test_noise_in_s21_shows_up_in_z_as_the_sigma_predicts():
    # Monte Carlo of additive circular noise in S21 (common practice, no source: first-order propagation).
    rng = np.random.default_rng(5)
    s21 = np.array([0.003, 0.3, 0.97 + 0.1j])  # a low-ohm, a mid and a nearly-open shunt part
    noise = 1e-5 * (rng.standard_normal((20000, 3)) + 1j * rng.standard_normal((20000, 3))) / np.sqrt(2)
    lnz = np.log(s21_shunt_to_z(s21 + noise))
    predicted = 1e-5 * lnz_sensitivity("touchstone_s21_shunt", s21) / np.sqrt(2)  # per real component
    np.testing.assert_allclose(lnz.real.std(axis=0), predicted, rtol=0.03)
    np.testing.assert_allclose(lnz.imag.std(axis=0), predicted, rtol=0.03)


def write(network: skrf.Network, path, **kwargs) -> str:
    """Write with scikit-rf's own Touchstone writer."""
    network.name = path.stem
    path.write_text(network.write_touchstone(return_string=True, **kwargs))
    return str(path)


def test_a_reflection_file_reads_back_the_part_with_its_provenance(tmp_path):
    freq = frequency(101)
    w = 2 * np.pi * freq.f
    z = 0.02 + 1j * w * 0.8e-9 + 1 / (1j * w * 2.2e-9)  # series R-L-C, like a snubber capacitor
    med = skrf.media.DefinedGammaZ0(freq, z0=50)
    path = write(med.load(skrf.tlineFunctions.zl_2_Gamma0(50, z)), tmp_path / "part.s1p", form="db")
    m = read_touchstone(path, None)
    np.testing.assert_allclose(m.frequency, freq.f, rtol=1e-9)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-8)  # scikit-rf wrote S11 in dB/deg
    assert m.provenance.form == "touchstone_s11"
    assert m.provenance.sha256 == hashlib.sha256((tmp_path / "part.s1p").read_bytes()).hexdigest()
    assert m.provenance.columns["reference"] == "50 ohm"
    assert m.provenance.units == {"frequency": "MHz", "S": "DB (dB, angle deg)"}
    assert not m.sigma_absolute
    s11 = (z - 50) / (z + 50)  # reflection coefficient (common practice, no source)
    np.testing.assert_allclose(m.sigma_lnmag, lnz_sensitivity("touchstone_s11", s11), rtol=1e-6)
    np.testing.assert_array_equal(m.sigma_lnmag, m.sigma_phase)


@pytest.mark.parametrize("through", ["shunt", "series"])
def test_a_two_port_file_with_per_port_references_reads_back_the_part(tmp_path, through):
    freq = frequency(51)
    z = 0.005 + 1j * 2 * np.pi * freq.f * 1e-9 if through == "shunt" else 1e3 / (1 + 1j * freq.f / 1e8)
    network = skrf.Network(frequency=freq, s=two_port_of(z, through, (50.0, 75.0)), z0=[50.0, 75.0])
    path = write(network, tmp_path / "part.s2p", form="ri", version="2.0")
    m = read_touchstone(path, SimpleNamespace(through=through))
    np.testing.assert_allclose(m.impedance, z, rtol=1e-8)  # scikit-rf a2s and its Touchstone 2 writer
    assert m.provenance.form == f"touchstone_s21_{through}"
    assert m.provenance.columns["reference"] == "port 1: 50 ohm, port 2: 75 ohm"


def test_points_where_the_conversion_is_singular_are_dropped_and_counted(tmp_path):
    # S11 = 1 is an open: Z = Z0 (1 + S11)/(1 - S11) has no finite value there (common practice, no source)
    path = tmp_path / "open_end.s1p"
    path.write_text("# MHz S RI R 50\n0 0.2 0\n1 0.5 0.1\n2 1 0\n3 0.4 0.2\n4 1 0\n")
    m = read_touchstone(path, None)
    np.testing.assert_array_equal(m.frequency, [1e6, 3e6])
    assert "dropped 1 point(s) at 0 Hz" in m.provenance.warnings
    assert any("dropped 2 point(s) where S11" in w for w in m.provenance.warnings)
    path.write_text("# MHz S RI R 50\n1 1 0\n2 1 0\n")
    with pytest.raises(InputError, match="no usable point"):
        read_touchstone(path, None)


def test_an_option_line_with_no_fields_means_ghz_s_ma_and_50_ohm(tmp_path):
    # Touchstone defaults "# GHz S MA R 50" (Touchstone File Format Specification, from memory), checked
    # against scikit-rf's reader of the same file.
    path = tmp_path / "defaults.s1p"
    path.write_text("#\n1 0.5 0\n2 0.5 90\n")
    m = read_touchstone(path, None)
    reference = skrf.Network(str(path))
    np.testing.assert_allclose(m.frequency, [1e9, 2e9], rtol=1e-15)
    np.testing.assert_allclose(m.frequency, reference.f, rtol=1e-15)
    np.testing.assert_allclose(m.impedance, reference.z[:, 0, 0], rtol=1e-12)  # scikit-rf Network.z
    # S11 = 0.5 at 0 deg on 50 ohm: Z = 50 (1.5 / 0.5) = 150 ohm (common practice, no source)
    assert m.impedance[0] == pytest.approx(150.0, rel=1e-12)


def test_option_line_is_case_insensitive_and_comments_are_ignored(tmp_path):
    # option-line keywords are case-insensitive and "!" starts a comment (Touchstone specification, from
    # memory); scikit-rf reads the same file as the reference.
    path = tmp_path / "lower.s1p"
    path.write_text("! bench comment\n# khz s ri r 25 ! trailing comment\n1 0.2 0.1\n2 -0.3 0.4 ! note\n")
    m = read_touchstone(path, None)
    reference = skrf.Network(str(path))
    np.testing.assert_allclose(m.frequency, [1e3, 2e3], rtol=1e-15)
    np.testing.assert_allclose(m.impedance, reference.z[:, 0, 0], rtol=1e-12)  # scikit-rf Network.z
    s = np.array([0.2 + 0.1j, -0.3 + 0.4j])
    np.testing.assert_allclose(m.impedance, 25 * (1 + s) / (1 - s), rtol=1e-12)  # common practice, no source


def test_a_two_port_file_without_through_says_how_to_fix_it(tmp_path):
    s = two_port_of(np.full(5, 1.0 + 0j), "shunt", (50, 50))
    network = skrf.Network(frequency=frequency(5), s=s, z0=50)
    path = write(network, tmp_path / "cap.s2p")
    with pytest.raises(InputError, match=r"cap\.s2p.*--through shunt.*--through series"):
        read_touchstone(path, SimpleNamespace(through=None))


# Touchstone 1.x layout (Touchstone File Format Specification, from memory): an option line
# "# <unit> <parameter> <format> R <ohm>", ascending frequencies, per row the frequency and n^2 complex
# values.
BAD_FILES = {
    "truncated.s1p": ("# MHz S MA R 50\n1 0.5 10\n2 0.4 20\n3 0.3\n", "row 4 has 2 values.*truncated"),
    "wrong_parameter.s1p": ("# MHz Q MA R 50\n1 0.5 10\n", "row 1: option line.*unknown field 'q'"),
    "wrong_format.s1p": ("# MHz S XY R 50\n1 0.5 10\n", "unknown field 'xy'"),
    "wrong_reference.s1p": ("# MHz S MA R fifty\n1 0.5 10\n", "no positive reference"),
    "no_option_line.s1p": ("1 0.5 10\n2 0.4 20\n", "data before the option line"),
    "hybrid_data.s1p": ("# MHz H MA R 50\n1 0.5 10\n", "holds H parameters"),
    "non_numeric.s1p": ("# MHz S MA R 50\n1 0.5 10\n2 0,4 20\n", "row 3, column 2: '0,4' is not a finite"),
    "not_a_number.s1p": ("# MHz S MA R 50\n1 0.5 10\n2 nan 20\n", "row 3, column 2: 'nan' is not a finite"),
    "two_port_data.s1p": ("# MHz S RI R 50\n1 0 0 1 0 1 0 0 0\n", "9 values.*2-port file: check the ext"),
    "one_port_data.s2p": ("# MHz S RI R 50\n1 0 0\n2 0 0\n3 0 0\n", "3 values.*1-port file: check the ext"),
    "empty.s1p": ("", "no option line"),
    "repeated.s1p": ("# MHz S RI R 50\n1 0.1 0\n1 0.1 0\n", "already given in row 2"),
    "descending.s2p": ("# MHz S RI R 50\n2" + " 0.1 0" * 4 + "\n1" + " 0.1 0" * 4 + "\n", "must rise"),
}


@pytest.mark.parametrize("name", sorted(BAD_FILES))
def test_bad_files_raise_one_line_input_errors_naming_the_file(tmp_path, name):
    text, message = BAD_FILES[name]
    path = tmp_path / name
    path.write_text(text)
    with pytest.raises(InputError, match=message) as caught:
        read_touchstone(path, SHUNT)
    assert str(path) in str(caught.value) and "\n" not in str(caught.value)


@pytest.mark.parametrize("name", [*sorted(BAD_FILES), "missing_through.s2p"])
def test_bad_files_through_the_command_line_exit_non_zero_with_one_stderr_line(tmp_path, capsys, name):
    from fitz_tool.cli import main

    path = tmp_path / name
    if name == "missing_through.s2p":
        path.write_text("# MHz S RI R 50\n1 0 0 1 0 1 0 0 0\n2 0 0 1 0 1 0 0 0\n")
    else:
        path.write_text(BAD_FILES[name][0])
    code = main(["inspect", str(path)])
    captured = capsys.readouterr()
    assert code == 2  # InputError's exit code
    assert len(captured.err.strip().splitlines()) == 1
    assert name in captured.err and "Traceback" not in captured.err
