"""Delimited tables whose columns are named after ngspice vectors (vm(dut), mag(v(sh)), v(dut) v(dut))."""

from __future__ import annotations

import subprocess
from pathlib import Path

import numpy as np
import pytest
from spice_sim import ac_analysis, require_ngspice

from fitz_tool.exceptions import InputError
from fitz_tool.readers import ReadOptions, read_measurement

F = np.logspace(3, 7, 9)
R_SHUNT = 0.1


def _part(f: np.ndarray) -> np.ndarray:
    # (R + jwL) parallel to C, R = 1.5 ohm, L = 22 uH, C = 1 nF (common practice, no source)
    w = 2 * np.pi * f
    return 1 / (1 / (1.5 + 1j * w * 22e-6) + 1j * w * 1e-9)


def _bench(f: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Part voltage, shunt voltage and current for 1 V driving part + series shunt (common practice, no
    source: Ohm's law with complex impedances)."""
    z = _part(f)
    current = 1.0 / (z + R_SHUNT)
    return z * current, R_SHUNT * current, current


def _write(path: Path, headers: list[str], columns: list[np.ndarray], sep: str = ",") -> Path:
    rows = [sep.join(headers)]
    rows += [sep.join(f"{v:.15e}" for v in row) for row in zip(F, *columns, strict=True)]
    path.write_text("\n".join(rows) + "\n")
    return path


V, VS, CUR = _bench(F)
LAYOUTS = {
    "vm_vp_rad": (["vm(dut)", "vp(dut)", "vm(sh)", "vp(sh)"],
                  [abs(V), np.angle(V), abs(VS), np.angle(VS)], R_SHUNT),
    "mag_ph_deg": (["mag(v(dut))", "ph(v(dut))", "mag(v(shunt))", "ph(v(shunt))"],
                   [abs(V), np.angle(V, deg=True), abs(VS), np.angle(VS, deg=True)], R_SHUNT),
    "vr_vi": (["vr(sh)", "vi(sh)", "vr(dut)", "vi(dut)"], [VS.real, VS.imag, V.real, V.imag], R_SHUNT),
    "real_imag_func": (["real(v(dut))", "imag(v(dut))", "re(v(i_sense))", "im(v(i_sense))"],
                       [V.real, V.imag, VS.real, VS.imag], R_SHUNT),
    "vdb_vp": (["vdb(dut)", "vp(dut)", "vdb(sh)", "vp(sh)"],
               [20 * np.log10(abs(V)), np.angle(V), 20 * np.log10(abs(VS)), np.angle(VS)], R_SHUNT),
    "v_and_print_current": (["vm(dut)", "vp(dut)", "im(vsense)", "ip(vsense)"],
                            [abs(V), np.angle(V), abs(CUR), np.angle(CUR)], None),
    "v_and_mag_current": (["mag(v(dut))", "ph(v(dut))", "mag(i(vsense))", "cph(i(vsense))"],
                          [abs(V), np.angle(V), abs(CUR), np.angle(CUR)], None),
    "device_current": (["vr(dut)", "vi(dut)", "real(@r1[i])", "imag(@r1[i])"],
                       [V.real, V.imag, CUR.real, CUR.imag], None),
}


@pytest.mark.parametrize("name", sorted(LAYOUTS))
def test_layout_reads_back_the_part_impedance(tmp_path: Path, name: str) -> None:
    headers, columns, shunt = LAYOUTS[name]
    path = _write(tmp_path / f"{name}.csv", ["frequency", *headers], columns)
    m = read_measurement(path, ReadOptions(shunt=shunt))
    np.testing.assert_allclose(m.frequency, F, rtol=1e-14)
    np.testing.assert_allclose(m.impedance, _part(F), rtol=1e-12)
    assert m.provenance.form == "simulator_complex"


def test_phase_unit_decision_is_a_warning(tmp_path: Path) -> None:
    headers, columns, _ = LAYOUTS["vm_vp_rad"]
    rad = read_measurement(_write(tmp_path / "r.csv", ["frequency", *headers], columns),
                           ReadOptions(shunt=0.1))
    assert any("read as radians" in w for w in rad.provenance.warnings)
    headers, columns, _ = LAYOUTS["mag_ph_deg"]
    deg = read_measurement(_write(tmp_path / "d.csv", ["frequency", *headers], columns),
                           ReadOptions(shunt=0.1))
    assert any("read as degrees" in w for w in deg.provenance.warnings)


def test_stated_phase_unit_wins(tmp_path: Path) -> None:
    # degrees that all lie within [-pi, pi] would be taken as radians, unless the header says deg
    small = np.full(F.size, 2.0)  # 2 deg
    path = _write(tmp_path / "s.csv",
                  ["frequency", "vm(dut) ", "vp(dut) (deg)", "mag(i(vsense))", "ph(i(vsense)) [deg]"],
                  [np.ones(F.size), small, np.ones(F.size), np.zeros(F.size)])
    m = read_measurement(path)
    np.testing.assert_allclose(np.angle(m.impedance, deg=True), 2.0, rtol=1e-12)


def test_wrdata_pairs_with_repeated_scale(tmp_path: Path) -> None:
    # wrdata without wr_singlescale: frequency, re, im per vector, names repeated
    path = tmp_path / "w.txt"
    lines = [" frequency v(dut) v(dut) frequency i(vsense) i(vsense)"]
    lines += [f" {f:.15e} {v.real:.15e} {v.imag:.15e} {f:.15e} {i.real:.15e} {i.imag:.15e}"
              for f, v, i in zip(F, V, CUR, strict=True)]
    path.write_text("\n".join(lines) + "\n")
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, _part(F), rtol=1e-12)


def test_source_current_sign_rule(tmp_path: Path) -> None:
    # the driving source's current counts into its + terminal: V / i(v1) = -Z, negated (documented rule)
    path = _write(tmp_path / "n.csv", ["frequency", "vm(dut)", "vp(dut)", "mag(i(v1))", "ph(i(v1))"],
                  [abs(V), np.angle(V), abs(-CUR), np.angle(-CUR)])
    m = read_measurement(path)
    np.testing.assert_allclose(m.impedance, _part(F), rtol=1e-12)
    assert any("negated" in w for w in m.provenance.warnings)


def test_two_voltages_without_shunt_refused_with_both_candidates(tmp_path: Path) -> None:
    headers, columns, _ = LAYOUTS["vm_vp_rad"]
    path = _write(tmp_path / "a.csv", ["frequency", *headers], columns)
    with pytest.raises(InputError) as err:
        read_measurement(path)
    assert "--map v_amplitude='vm(dut)' --map i_amplitude='vm(sh)'" in str(err.value)
    m = read_measurement(path, ReadOptions(shunt=R_SHUNT, column_map={"v_amplitude": "vm(dut)",
                                                                      "i_amplitude": "vp(sh)"}))
    np.testing.assert_allclose(m.impedance, _part(F), rtol=1e-12)


def test_no_shunt_like_node_refused(tmp_path: Path) -> None:
    path = _write(tmp_path / "b.csv", ["frequency", "vm(a)", "vp(a)", "vm(b)", "vp(b)"],
                  [abs(V), np.angle(V), abs(VS), np.angle(VS)])
    with pytest.raises(InputError, match="neither node name reads as a shunt"):
        read_measurement(path, ReadOptions(shunt=R_SHUNT))


def test_magnitude_without_phase_refused(tmp_path: Path) -> None:
    path = _write(tmp_path / "c.csv", ["frequency", "vm(dut)", "im(vsense)", "ip(vsense)"],
                  [abs(V), abs(CUR), np.angle(CUR)])
    with pytest.raises(InputError, match=r"vector v\(dut\) has only 'vm\(dut\)'"):
        read_measurement(path)


def test_hint_never_puts_a_current_column_in_a_voltage_role(tmp_path: Path) -> None:
    path = _write(tmp_path / "h.csv", ["frequency", "im(vsense)", "ip(vsense)", "level", "x1"],
                  [abs(CUR), np.angle(CUR), abs(V), abs(V)])
    with pytest.raises(InputError) as err:
        read_measurement(path)
    message = str(err.value)
    assert "--map" in message
    for role in ("v_amplitude", "v_phase", "z_magnitude", "z_phase"):
        assert f"{role}='im(vsense)'" not in message and f"{role}='ip(vsense)'" not in message


NETLIST = """
V1 top 0 ac 1
Vsense top a 0
R1 a m 1.5
L1 m b 22u
C1 a b 1n
Rsh b 0 0.1
Edut dut 0 a b 1
Esh sh 0 b 0 1
Rl1 dut 0 1meg
Rl2 sh 0 1meg
"""


def _ngspice_file(tmp_path: Path, vectors: str) -> Path:
    exe = require_ngspice()
    out = tmp_path / "ng.txt"
    deck = (f"* vectors\n{NETLIST}\n.control\noption numdgt=15\nac dec 5 1e3 1e7\nset wr_vecnames\n"
            f"set wr_singlescale\nwrdata {out} {vectors}\nquit\n.endc\n.end\n")
    (tmp_path / "deck.cir").write_text(deck)
    subprocess.run([exe, "-b", str(tmp_path / "deck.cir")], capture_output=True, text=True, timeout=120)
    assert out.exists()
    return out


@pytest.mark.parametrize("vectors, shunt", [
    ("vm(dut) vp(dut) vm(sh) vp(sh)", R_SHUNT),
    ("mag(v(dut)) ph(v(dut)) real(v(sh)) imag(v(sh))", R_SHUNT),
    ("v(dut) i(vsense)", None),
    ("vdb(dut) vp(dut) mag(i(v1)) ph(i(v1))", None),
])
def test_ngspice_written_file(tmp_path: Path, vectors: str, shunt: float | None) -> None:
    # ngspice AC analysis: ngspice writes the file (its own header names); the part impedance is
    # (v(a) - v(b)) / i(vsense) from the same netlist
    path = _ngspice_file(tmp_path, vectors)
    m = read_measurement(path, ReadOptions(shunt=shunt))
    f, ref = ac_analysis(NETLIST, ["v(dut)", "i(vsense)"], 1e3, 1e7, points_per_decade=5)
    z = ref["v(dut)"] / ref["i(vsense)"]
    np.testing.assert_allclose(m.frequency, f, rtol=1e-12)
    np.testing.assert_allclose(m.impedance, z, rtol=1e-6)
    assert abs(z).max() > 100 and abs(z).min() < 2  # the sweep spans the resonance
