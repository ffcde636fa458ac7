"""Corrections: channel skew against an ngspice delay line, fixture compensation against scikit-rf."""

import numpy as np
import pytest
import skrf
from spice_sim import ac_analysis

from fitz_tool.corrections import Corrections, apply_corrections, compensate_fixture, remove_skew
from fitz_tool.exceptions import InputError
from fitz_tool.measurement import Measurement, Provenance

FREQ = skrf.Frequency(1, 1000, 151, "MHz", sweep_type="log")
MED = skrf.media.DefinedGammaZ0(FREQ, z0=50)
W = 2 * np.pi * FREQ.f


def load(z: np.ndarray) -> skrf.Network:
    """A one-port of impedance ``z`` (ohm) in scikit-rf."""
    return MED.load(skrf.tlineFunctions.zl_2_Gamma0(50, z))


def measured(network: skrf.Network, source: str = "", sigma=None) -> Measurement:
    """What an analyzer at the fixture's input reads: the one-port's impedance (scikit-rf Network.z)."""
    return Measurement(network.frequency.f, network.z[:, 0, 0], sigma_lnmag=sigma, sigma_phase=sigma,
                       provenance=Provenance(source=source, form="touchstone_s11"))


# The part: a snubber-size capacitor, 40 mohm + 0.7 nH + 1 nF (series resonance near 190 MHz).
PART = 0.04 + 1j * W * 0.7e-9 + 1 / (1j * W * 1e-9)
# The fixture: 25 mohm + 1.5 nH of leads towards the analyzer, 0.9 pF and 2 uS across the part's pads.
LEADS = MED.resistor(0.025 + 1j * W * 1.5e-9)
PADS = MED.shunt(load(1 / (2e-6 + 1j * W * 0.9e-12)))


def test_a_current_channel_delay_simulated_with_a_delay_line_is_removed():
    # ngspice: the current-sense voltage reaches the scope through a matched lossless line of TD = 4 ns.
    netlist = """
V1 in 0 DC 0 AC 1
Rsrc in a 0.5
Rpart a m 10
Lpart m b 22u
Rsense b 0 1
E1 e 0 b 0 1
Rfeed e e2 50
T1 e2 0 c 0 Z0=50 TD=4n
Rterm c 0 50
"""
    f, v = ac_analysis(netlist, ["v(a)", "v(b)", "v(c)"], 1e5, 1e8, points_per_decade=10)
    # a 50 ohm source into a matched 50 ohm line delivers half its voltage (common practice, no source);
    # sense resistor 1 ohm
    z_scope = (v["v(a)"] - v["v(b)"]) / (2 * v["v(c)"] / 1.0)
    true = 10 + 1j * 2 * np.pi * f * 22e-6
    # Delay lags the current, adding +2 pi f dt to the phase of Z (common practice, no source).
    np.testing.assert_allclose(np.angle(z_scope / true), np.angle(np.exp(2j * np.pi * f * 4e-9)), atol=1e-9)
    fixed = apply_corrections(Measurement(f, z_scope), Corrections(skew=4e-9))
    np.testing.assert_allclose(fixed.impedance, true, rtol=1e-9)  # ngspice
    assert "current channel delay 4" in fixed.provenance.steps[-1]
    assert not np.allclose(z_scope, true, rtol=1e-2)


def test_open_short_removes_a_series_then_shunt_fixture_exactly():
    fixture = LEADS ** PADS  # scikit-rf cascade: analyzer - leads - pads - part
    m = measured(fixture ** load(PART), "part.s1p")
    fixed = apply_corrections(m, Corrections(open=measured(fixture ** MED.open(), "open.s1p"),
                                             short=measured(fixture ** MED.short(), "short.s1p")))
    np.testing.assert_allclose(fixed.impedance, PART, rtol=1e-9)  # scikit-rf cascade
    assert not np.allclose(m.impedance, PART, rtol=0.1)  # the fixture matters here
    assert fixed.provenance.steps[0].startswith(
        "fixture compensation from open 'open.s1p' and short 'short.s1p'")


def test_short_only_and_open_only_remove_their_half_of_the_fixture():
    short_only = apply_corrections(measured(LEADS ** load(PART)),
                                   Corrections(short=measured(LEADS ** MED.short())))
    np.testing.assert_allclose(short_only.impedance, PART, rtol=1e-9)  # scikit-rf cascade
    open_only = apply_corrections(measured(PADS ** load(PART)),
                                  Corrections(open=measured(PADS ** MED.open())))
    np.testing.assert_allclose(open_only.impedance, PART, rtol=1e-9)  # scikit-rf cascade


def test_open_short_load_removes_any_linear_fixture():
    # Pads nearest the analyzer, then leads, then 20 deg (at 1 GHz) of 60 ohm line: not the open/short model.
    line = skrf.media.DefinedGammaZ0(FREQ, z0=60).line(20 * FREQ.f / 1e9, unit="deg")
    fixture = PADS ** LEADS ** line
    standards = dict(open=measured(fixture ** MED.open()), short=measured(fixture ** MED.short()))
    m = measured(fixture ** load(PART))
    open_short = apply_corrections(m, Corrections(**standards))
    assert np.max(np.abs(open_short.impedance / PART - 1)) > 0.05  # the open/short model does not hold
    reference = 50.0
    full = apply_corrections(m, Corrections(**standards, load=measured(fixture ** MED.match()),
                                            load_value=reference))
    np.testing.assert_allclose(full.impedance, PART, rtol=1e-8)  # scikit-rf cascade
    assert "known value 50.00 ohm" in full.provenance.steps[0]


def test_skew_is_removed_from_the_standards_too():
    fixture = LEADS ** PADS
    delay = np.exp(1j * W * 3e-9)  # same bench, same late current channel

    def skewed(network):
        return Measurement(FREQ.f, network.z[:, 0, 0] * delay)

    fixed = apply_corrections(skewed(fixture ** load(PART)),
                              Corrections(skew=3e-9, open=skewed(fixture ** MED.open()),
                                          short=skewed(fixture ** MED.short())))
    np.testing.assert_allclose(fixed.impedance, PART, rtol=1e-9)  # scikit-rf cascade
    assert [s.split(":")[0] for s in fixed.provenance.steps[:3]] == [
        "removed channel skew", "the same skew removed from the fixture standards",
        "fixture compensation from open and short"]


def test_standards_on_a_coarser_grid_are_interpolated():
    coarse = skrf.Frequency(0.5, 2000, 41, "MHz", sweep_type="log")
    med = skrf.media.DefinedGammaZ0(coarse, z0=50)
    w = 2 * np.pi * coarse.f
    leads = med.resistor(0.025 + 1j * w * 1.5e-9)
    pads = med.shunt(med.load(skrf.tlineFunctions.zl_2_Gamma0(50, 1 / (2e-6 + 1j * w * 0.9e-12))))
    short = measured(leads ** pads ** med.short())
    open_ = measured(leads ** pads ** med.open())
    m = measured(LEADS ** PADS ** load(PART))
    # The short (R + j w L) is linear in f, so interpolation is exact (scikit-rf cascade).
    short_only = apply_corrections(measured(LEADS ** load(PART)), Corrections(short=short))
    np.testing.assert_allclose(short_only.impedance, PART, rtol=1e-9)
    # The open's admittance is G + j w C up to the small product of leads and pads.
    fixed = apply_corrections(m, Corrections(open=open_, short=short))
    np.testing.assert_allclose(fixed.impedance, PART, rtol=2e-3)
    assert "2 standard(s) interpolated onto the measurement's 151 points" in fixed.provenance.steps[0]


def test_standards_that_do_not_cover_the_measurement_are_refused():
    narrow = Measurement(np.array([2e6, 5e8]), np.array([0.01 + 0.01j, 0.01 + 1j]),
                         provenance=Provenance("s.s1p"))
    expected = (r"s\.s1p: the short standard covers 2\.000 MHz to 500\.0 MHz but the measurement spans "
                r"1\.000 MHz to 1\.000 GHz")
    with pytest.raises(InputError, match=expected):
        apply_corrections(measured(load(PART)), Corrections(short=narrow))


def test_sigmas_are_carried_through_the_compensation():
    fixture = LEADS ** PADS
    short, open_ = measured(fixture ** MED.short()), measured(fixture ** MED.open())
    m = measured(fixture ** load(PART), sigma=np.full(FREQ.npoints, 0.01))
    fixed = compensate_fixture(m, open=open_, short=short)
    # Analytic against numeric d ln Zdut / d ln Zm (common practice, no source: first-order propagation).
    h = 1e-7
    bumped = compensate_fixture(Measurement(m.frequency, m.impedance * np.exp(h)), open=open_, short=short)
    numeric = np.abs(np.log(bumped.impedance / fixed.impedance)) / h
    np.testing.assert_allclose(fixed.sigma_lnmag, 0.01 * numeric, rtol=1e-5)
    np.testing.assert_array_equal(fixed.sigma_lnmag, fixed.sigma_phase)
    assert np.max(fixed.sigma_lnmag) > 0.05  # near the part's resonance the fixture's share is large
    no_sigma = compensate_fixture(measured(fixture ** load(PART)), open=open_, short=short)
    np.testing.assert_allclose(no_sigma.sigma_lnmag, numeric, rtol=1e-5)


def test_nothing_to_correct_returns_the_measurement_itself():
    m = measured(load(PART))
    assert apply_corrections(m, Corrections()) is m


def test_skew_sigmas_and_magnitudes_are_unchanged():
    m = measured(load(PART), sigma=np.full(FREQ.npoints, 0.02))
    fixed = remove_skew(m, 1e-12)
    np.testing.assert_allclose(np.abs(fixed.impedance), np.abs(m.impedance), rtol=1e-12)
    np.testing.assert_array_equal(fixed.sigma_phase, m.sigma_phase)
    assert fixed.provenance.warnings == ()
    assert "check it is in seconds" in remove_skew(m, 1e-6).provenance.warnings[0]


@pytest.mark.parametrize(("corrections", "message"), [
    (dict(load="short"), "--load needs both --open and --short"),
    (dict(open="open", short="short", load="short"), "--load FILE and --load-value OHMS go together"),
    (dict(open="open", short="short", load="short", load_value=0.0), "finite, non-zero"),
    (dict(load_value=50.0), "an open and/or a short"),
])
def test_incomplete_load_calibration_is_refused(corrections, message):
    fixture = LEADS ** PADS
    standards = {"open": measured(fixture ** MED.open()), "short": measured(fixture ** MED.short())}
    resolved = {k: standards[v] if k in ("open", "short", "load") else v for k, v in corrections.items()}
    with pytest.raises(InputError, match=message):
        apply_corrections(measured(fixture ** load(PART)), Corrections(**resolved))
