"""Progress of long work: a bar on stderr only when stderr is a terminal and not --quiet; same results."""

from __future__ import annotations

import re
import sys

import numpy as np
import pytest

from fitz_tool import progress
from fitz_tool.cli import main
from fitz_tool.progress import LONG_READ_LINES


@pytest.fixture(scope="module")
def long_choke(tmp_path_factory):
    """A choke of LONG_READ_LINES rows (0.5 % noise): long enough for the reading bar."""
    path = tmp_path_factory.mktemp("progress") / "long_choke.csv"
    rng = np.random.default_rng(7)
    f = np.logspace(3, 7, LONG_READ_LINES)
    jw = 2j * np.pi * f
    z = (0.05 + jw * 22e-6) / (1 + (0.05 + jw * 22e-6) * jw * 10e-12)
    z = z * np.exp(0.005 * rng.standard_normal(f.size) + 0.005j * rng.standard_normal(f.size))
    table = np.column_stack([f, np.abs(z), np.degrees(np.angle(z))])
    with path.open("w") as handle:
        handle.write("Frequency (Hz),|Z| (ohm),Phase (deg)\n")
        np.savetxt(handle, table, delimiter=",", fmt="%.10g")
    return path


CHOKE = "sample_measurements/output_choke_scope.csv"  # 0.1 ohm shunt


def _run(argv: list[str], capsys, tty: bool) -> tuple[int, str, str]:
    """``main(argv)`` with stderr seen as a terminal or not; (exit code, stdout, stderr)."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(sys.stderr, "isatty", lambda: tty)
        code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _fit(out, capsys, tty: bool, *extra: str) -> tuple[int, str, str, str]:
    """``fit`` with intervals for every parameter and a Monte Carlo check; (code, stdout, stderr, JSON)."""
    code, stdout, stderr = _run(["fit", CHOKE, "--shunt", "0.1", "--model", "Rs + L1 || Cp", "--intervals",
                                 "all", "--budget-mc", "20", "--json", str(out), *extra], capsys, tty)
    masked = re.sub(r'"date": "[^"]*"', '"date": ""', out.read_text()).replace(out.name, "out.json")
    return code, stdout.replace(out.name, "out.json"), stderr, masked


def test_no_bar_when_stderr_is_not_a_terminal_or_quiet(long_choke, tmp_path, capsys):
    code, _, err, _ = _fit(tmp_path / "a.json", capsys, False)
    assert code == 0
    assert err == f"wrote {tmp_path / 'a.json'}\n"  # only the line saying what was written
    code, _, err, _ = _fit(tmp_path / "b.json", capsys, True, "--quiet")
    assert code == 0 and err == ""
    code, _, err = _run(["inspect", str(long_choke)], capsys, False)
    assert code == 0 and err == ""


def test_bars_on_a_terminal_and_the_same_results(long_choke, tmp_path, capsys):
    _, plain_out, _, plain_json = _fit(tmp_path / "plain.json", capsys, False)
    code, out, err, tty_json = _fit(tmp_path / "tty.json", capsys, True)
    assert code == 0 and "\r" in err
    for what in ("interval of L1", "interval of Cp", "Monte Carlo check", "0/20"):
        assert what in err, err[-2000:]
    assert out == plain_out and tty_json == plain_json
    _, plain_out, _ = _run(["inspect", str(long_choke)], capsys, False)
    code, out, err = _run(["inspect", str(long_choke)], capsys, True)
    assert code == 0 and "reading long_choke.csv" in err and out == plain_out


def test_a_short_file_reads_without_a_bar(tmp_path, capsys):
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(sys.stderr, "isatty", lambda: True)
        code = main(["inspect", "sample_measurements/output_choke_scope.csv", "--shunt", "0.1"])
    assert code == 0 and "reading" not in capsys.readouterr().err


def test_library_calls_never_draw(capsys):
    # outside progress.shown (the Python API), inside a drawn bar and with show=False nothing is written
    with progress.bar("outer", 3) as outer:
        outer.update()
    assert capsys.readouterr().err == ""
    with progress.shown(True):
        with progress.bar("short", 3, show=False) as short:
            short.update()
        with progress.bar("outer", 3) as outer, progress.bar("inner", 3) as inner:
            inner.update()
            outer.update()
    err = capsys.readouterr().err
    assert "short" not in err and "inner" not in err and "outer" in err
    with progress.shown(False), progress.bar("hidden", 3) as hidden:
        hidden.update()
    assert capsys.readouterr().err == ""


def test_wanted_is_the_one_decision():
    class Terminal:
        def isatty(self):
            return True

    assert progress.wanted(False, Terminal()) and not progress.wanted(True, Terminal())
    assert not progress.wanted(False, object())  # a stream without isatty is not a terminal


def test_a_long_touchstone_file_shows_its_reading_bar(tmp_path, capsys):
    # S11 = (Z - 50) / (Z + 50) of a 22 nH coil with 50 mohm (reflection coefficient, common practice)
    f = np.geomspace(1e6, 1e9, LONG_READ_LINES)
    z = 0.05 + 2j * np.pi * f * 22e-9
    s11 = (z - 50) / (z + 50)
    path = tmp_path / "long_coil.s1p"
    with path.open("w") as handle:
        handle.write("# Hz S RI R 50\n")
        np.savetxt(handle, np.column_stack([f, s11.real, s11.imag]), fmt="%.12g")
    code, plain_out, err = _run(["inspect", str(path)], capsys, False)
    assert code == 0 and err == ""
    code, out, err = _run(["inspect", str(path)], capsys, True)
    assert code == 0 and "reading long_coil.s1p" in err and out == plain_out
