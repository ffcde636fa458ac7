"""Generated hostile inputs and the judge of what the tool did with them (shared by tests and the long run).

Five families: delimited bench tables with hostile cells, raw garbage, Touchstone files with hostile rows
and option lines, circuit expressions, and command lines. Each case runs the real command line in-process
(``FITZ_TOOL_DEBUG=1`` so that an unexpected exception surfaces instead of the one-line guard) and gets one
outcome:

``ok``          exit 0, and every point read equals the truth of a clean row (an oracle the case carries)
``refused``     non-zero exit with exactly one line "fitz-tool: error: ..." on stderr
``traceback``   an exception escaped, or stderr held more than that one line (warnings included)
``hang``        the case used more than ``HANG_SECONDS`` of CPU time (or ``WALL_SECONDS`` of wall time: the
                machine is shared, so wall time alone says little)
``wrong``       exit 0 but a point differs from the truth or comes from a corrupted row (silently wrong)
``damaged``     an input changed, or a refused run left an output file behind
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import math
import os
import signal
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from hypothesis import strategies as st

HANG_SECONDS = 30
WALL_SECONDS = 300
OUTCOMES = ("ok", "refused", "traceback", "hang", "wrong", "damaged")


@dataclass
class Case:
    """One generated input: files to create, the command line, and the truth of the clean rows."""

    family: str
    files: dict[str, bytes]
    argv: list[str]
    #: frequency (Hz) -> true impedance (ohm) of every row that must read exactly; None: no oracle
    truth: dict[float, complex] | None = None
    outputs: list[str] = field(default_factory=list)
    note: str = ""


@dataclass
class Outcome:
    label: str
    seconds: float
    detail: str = ""
    cpu_seconds: float = 0.0
    exit_code: int | None = None  # None: no exit (a hang, or an exception that escaped main)


class _Hang(BaseException):
    pass


def _on_alarm(signum, frame):
    raise _Hang()


def _digest(folder: Path, names) -> dict[str, str]:
    return {n: hashlib.sha256((folder / n).read_bytes()).hexdigest() for n in names}


def _check_oracle(case: Case, folder: Path) -> str:
    """'' when every point read is the truth of a clean row, else what differs."""
    from fitz_tool.readers import ReadOptions, read_measurement

    options = ReadOptions(through="shunt" if case.argv[1].endswith(".s2p") else None)
    measurement = read_measurement(folder / case.argv[1], options)
    for f, z in zip(measurement.frequency, measurement.impedance, strict=True):
        key = min(case.truth, key=lambda t: abs(t - f)) if case.truth else None
        if key is None or abs(key - f) > 1e-9 * f:
            return f"point at {f!r} Hz comes from no clean row"
        if abs(z - case.truth[key]) > 1e-6 * abs(case.truth[key]):
            return f"Z at {f!r} Hz read as {z!r}, truth {case.truth[key]!r}"
    return ""


def run_case(case: Case, folder: Path) -> Outcome:
    """Write the case's files into ``folder``, run the command line there and judge the outcome."""
    from fitz_tool.cli import main

    folder.mkdir(parents=True, exist_ok=True)
    for name, data in case.files.items():
        (folder / name).write_bytes(data)
    before = _digest(folder, case.files)
    err, out = io.StringIO(), io.StringIO()
    previous = signal.signal(signal.SIGALRM, _on_alarm), signal.signal(signal.SIGPROF, _on_alarm)
    signal.alarm(WALL_SECONDS)
    signal.setitimer(signal.ITIMER_PROF, HANG_SECONDS)  # CPU time of this process (user + system)
    start, cpu_start = time.perf_counter(), time.process_time()
    label, detail = "", ""
    cwd = os.getcwd()
    os.environ["FITZ_TOOL_DEBUG"] = "1"
    try:
        os.chdir(folder)
        with contextlib.redirect_stderr(err), contextlib.redirect_stdout(out):
            code = main(case.argv)
    except _Hang:
        label, code = "hang", None
    except SystemExit as exc:  # argparse refusing an option: usage + one error line, exit 2
        code = exc.code
        lines = err.getvalue().strip().splitlines()
        if code != 2 or not lines or "error:" not in lines[-1]:
            label, detail = "traceback", f"SystemExit {code}: {err.getvalue()[-300:]}"
        else:
            label = "refused"
    except BaseException as exc:  # noqa: BLE001 - what the user would have seen as a traceback
        label, code, detail = "traceback", None, f"{type(exc).__name__}: {str(exc)[:300]}"
    finally:
        signal.alarm(0)
        signal.setitimer(signal.ITIMER_PROF, 0)
        signal.signal(signal.SIGALRM, previous[0])
        signal.signal(signal.SIGPROF, previous[1])
        os.chdir(cwd)
        os.environ.pop("FITZ_TOOL_DEBUG", None)
    seconds, cpu = time.perf_counter() - start, time.process_time() - cpu_start
    if not label:
        # "wrote PATH" lines name the files written (cli._wrote); anything else on stderr is a defect
        lines = [line for line in err.getvalue().splitlines() if not line.startswith("wrote ")]
        if code == 0:
            label = "ok" if not lines else "traceback"
            detail = err.getvalue()[-300:] if lines else ""
        elif len(lines) == 1 and lines[0].startswith("fitz-tool: error: "):
            label = "refused"
            detail = lines[0][:200]
        else:
            label, detail = "traceback", f"exit {code}: {err.getvalue()[-300:]}"
    if _digest(folder, case.files) != before:
        return Outcome("damaged", seconds, "an input file changed", cpu, code)
    if label in ("refused", "traceback") and code != 0 and any((folder / o).exists() for o in case.outputs):
        return Outcome("damaged", seconds, f"output left behind after exit {code}; {detail}", cpu, code)
    if label == "ok" and case.truth is not None:
        problem = _check_oracle(case, folder)
        if problem:
            return Outcome("wrong", seconds, problem, cpu, code)
    return Outcome(label, seconds, detail, cpu, code)


# ----------------------------------------------------------------------------------------------- data
def _impedance(frequency: np.ndarray, r: float, l_h: float, c: float) -> np.ndarray:
    """Z of R + jwL in parallel with C (common practice, no source): a smooth truth for the tables."""
    jw = 2j * np.pi * frequency
    series = r + jw * l_h
    return series / (1 + series * jw * c)


_HOSTILE_CELLS = ["9.9E37", "9.91E+37", "-9.9e37", "inf", "-inf", "Infinity", "nan", "", "NaN", "1e308",
                  "-1e308", "1e-320", "0", "-0", "abc", "1,5", "1.2.3", "--", "#N/A", "\u00b5", "1e", "0x1F",
                  "1_000", " ", "\x00", "OVLD", "ERR"]
#: hostile cells that are nevertheless valid readings (read as written, or dropped as 0 Hz / |Z| = 0)
_LEGITIMATE = {"1e-320", "0", "-0"}


def _is_float(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


@st.composite
def delimited_cases(draw) -> Case:
    """A |Z|/phase or R/X table of a known part, with hostile cells, rows and lines."""
    n = draw(st.integers(3, 40))
    fmin = 10 ** draw(st.floats(0, 5))
    frequency = fmin * np.logspace(0, draw(st.floats(0.5, 4)), n)
    z = _impedance(frequency, draw(st.floats(1e-3, 10)), 10 ** draw(st.floats(-8, -3)),
                   10 ** draw(st.floats(-12, -8)))
    polar = draw(st.booleans())
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    header = (["Frequency (Hz)", "|Z| (ohm)", "Phase (deg)"] if polar
              else ["Frequency (Hz)", "R (ohm)", "X (ohm)"])
    rows = []
    truth: dict[float, complex] = {}
    for f, zz in zip(frequency, z, strict=True):
        cells = [repr(float(f)), *([repr(float(abs(zz))), repr(float(np.degrees(np.angle(zz))))] if polar
                                   else [repr(float(zz.real)), repr(float(zz.imag))])]
        clean = True
        if draw(st.integers(0, 9)) == 0:
            column = draw(st.integers(0, 2))
            cells[column] = draw(st.sampled_from(_HOSTILE_CELLS))
            clean = cells[column] in _LEGITIMATE  # a hostile-looking but valid number is still the truth
        if clean and f not in truth:
            # the value as written, not as computed: the file's digits are the truth
            truth[float(cells[0])] = (complex(float(cells[1]) * np.exp(1j * np.radians(float(cells[2]))))
                                      if polar else complex(float(cells[1]), float(cells[2])))
        rows.append(delimiter.join(cells))
    extras = draw(st.lists(st.sampled_from(["comment", "blank", "long", "shuffle", "duplicate", "bom",
                                            "crlf", "negative"]), max_size=3))
    if "negative" in extras:
        first = rows[0].split(delimiter)
        rows[0] = delimiter.join(["-" + first[0].lstrip("-"), *first[1:]])
        if _is_float(first[0]):
            truth.pop(float(first[0]), None)
    if "duplicate" in extras:
        rows.append(rows[-1])
    if "shuffle" in extras:
        draw(st.randoms(use_true_random=False)).shuffle(rows)
    lines = [delimiter.join(header), *rows]
    if "comment" in extras:
        lines.insert(draw(st.integers(0, len(lines))), "# instrument note: " + draw(st.text(max_size=40)))
    if "blank" in extras:
        lines.insert(draw(st.integers(1, len(lines))), "")
    oracle: dict[float, complex] | None = truth
    if "long" in extras:
        lines.insert(1, "x" * draw(st.sampled_from([200_000, 140_000, 99_000])))
        oracle = None
    text = ("\r\n" if "crlf" in extras else "\n").join(lines) + "\n"
    data = ("\ufeff" if "bom" in extras else "").encode() + text.encode("utf-8", "surrogatepass")
    outputs = ["table.csv"]
    return Case("delimited", {"bench.csv": data}, ["inspect", "bench.csv", "--csv", "table.csv"], oracle,
                outputs, note=f"polar={polar} extras={extras}")


@st.composite
def garbage_cases(draw) -> Case:
    """Bytes or text that may or may not look like a table."""
    if draw(st.booleans()):
        data = draw(st.binary(max_size=2000))
    else:
        alphabet = st.sampled_from(list("0123456789.,;\t -+eE\n\r#!:()|") + ["nan", "inf", "9.9E37", "Hz",
                                                                               "kHz", "ohm", "deg", "V", "A"])
        data = "".join(draw(st.lists(alphabet, max_size=600))).encode()
    name = draw(st.sampled_from(["bench.csv", "bench.txt", "bench.dat", "bench.s1p", "bench.s2p"]))
    argv = ["inspect", name]
    if name.endswith(".s2p"):
        argv += ["--through", "shunt"]
    return Case("garbage", {name: data}, argv)


_TS_HOSTILE = ["descending", "negative", "ma_negative", "r_nan", "r_inf", "db_absurd", "huge_frequency",
               "long_comment", "count_mismatch", "marker", "zero_frequency", "duplicate", "nan_cell"]


def _s_of(z: np.ndarray, z0: float) -> np.ndarray:
    return (z - z0) / (z + z0)


@st.composite
def touchstone_cases(draw) -> Case:
    """A .s1p (reflection) or .s2p (shunt-through) file of a known part, with hostile rows and lines."""
    nports = draw(st.sampled_from([1, 2]))
    n = draw(st.integers(3, 30))
    unit, factor = draw(st.sampled_from([("Hz", 1.0), ("kHz", 1e3), ("MHz", 1e6), ("GHz", 1e9)]))
    fmt = draw(st.sampled_from(["RI", "MA", "DB"]))
    z0 = draw(st.sampled_from([50.0, 75.0, 25.0]))
    scaled = np.round(np.logspace(0, 2, n) * draw(st.floats(0.01, 10)), 9)
    scaled = np.unique(scaled)
    frequency = scaled * factor
    z = _impedance(frequency, 5.0, 10 ** draw(st.floats(-9, -6)), 10 ** draw(st.floats(-12, -9)))
    if nports == 1:
        s = _s_of(z, z0)
    else:
        s = 2 * z / (2 * z + z0)  # shunt-through S21 for equal references (common practice, no source)
    hostile = draw(st.lists(st.sampled_from(_TS_HOSTILE), max_size=2, unique=True))
    version2 = draw(st.booleans()) and "count_mismatch" not in hostile or "count_mismatch" in hostile
    r_text = "nan" if "r_nan" in hostile else "inf" if "r_inf" in hostile else repr(z0)

    def pair(value: complex) -> list[str]:
        if fmt == "RI":
            return [repr(value.real), repr(value.imag)]
        magnitude = abs(value) if fmt == "MA" else 20 * math.log10(abs(value))
        return [repr(magnitude), repr(math.degrees(math.atan2(value.imag, value.real)))]

    rows = []
    for f, sv in zip(scaled, s, strict=True):
        if nports == 1:
            cells = [repr(float(f)), *pair(complex(sv))]
        else:
            s11 = complex(sv - 1 + 1e-3)  # any reflection: only S21 is used
            cells = [repr(float(f)), *pair(s11), *pair(complex(sv)), *pair(complex(sv)), *pair(s11)]
        rows.append(cells)
    truth: dict[float, complex] | None = {}
    corrupt: set[int] = set()
    k = draw(st.integers(0, n - 1))
    if "negative" in hostile:
        rows[k][0] = repr(-float(rows[k][0]))
        corrupt.add(k)
    if "ma_negative" in hostile and fmt == "MA":
        rows[k][3 if nports == 2 else 1] = repr(-abs(float(rows[k][3 if nports == 2 else 1])) - 0.1)
        corrupt.add(k)
    if "db_absurd" in hostile and fmt == "DB":
        rows[k][3 if nports == 2 else 1] = "1e308"
        corrupt.add(k)
    if "huge_frequency" in hostile:
        rows[-1][0] = "1e308"
        corrupt.add(n - 1)
    if "marker" in hostile:
        rows[k][1] = "9.9E37"
        corrupt.add(k)
    if "nan_cell" in hostile:
        rows[k][2] = "nan"
        corrupt.add(k)
    if "zero_frequency" in hostile:
        rows[0][0] = "0"
        corrupt.add(0)
    if "duplicate" in hostile:
        rows.append(list(rows[k]))
        corrupt.add(k)
    order = list(range(len(rows)))
    if "descending" in hostile:
        order = order[::-1]
    for j in range(n):
        if j not in corrupt:
            cells = rows[j]
            s_read = _read_pair(cells[1:3] if nports == 1 else cells[3:5], fmt)
            truth[float(cells[0]) * factor] = (z0 * (1 + s_read) / (1 - s_read) if nports == 1
                                               else z0 / 2 * s_read / (1 - s_read))
    lines = ["! generated by the fuzz harness"]
    if "long_comment" in hostile:
        lines.append("!" + "c" * 200_000)
    if version2:
        lines.append("[Version] 2.0")
    lines.append(f"# {unit} S {fmt} R {r_text}")
    if version2:
        count = len(rows) + (1 if "count_mismatch" in hostile else 0)
        lines += [f"[Number of Ports] {nports}"] + (["[Two-Port Data Order] 21_12"] if nports == 2 else [])
        lines += [f"[Number of Frequencies] {count}", "[Network Data]"]
    lines += [" ".join(rows[j]) + (" ! row" if j % 7 == 3 else "") for j in order]
    if version2:
        lines.append("[End]")
    name = f"part.s{nports}p"
    argv = ["inspect", name] + (["--through", "shunt"] if nports == 2 else [])
    data = ("\n".join(lines) + "\n").encode()
    return Case("touchstone", {name: data}, argv, truth, note=f"{fmt} {hostile}")


def _read_pair(cells: list[str], fmt: str) -> complex:
    a, b = float(cells[0]), float(cells[1])
    if fmt == "RI":
        return complex(a, b)
    magnitude = a if fmt == "MA" else 10 ** (a / 20)
    return magnitude * complex(math.cos(math.radians(b)), math.sin(math.radians(b)))


_SMALL_TABLE = "Frequency (Hz),|Z| (ohm),Phase (deg)\n" + "".join(
    f"{float(f)!r},{float(abs(z))!r},{math.degrees(np.angle(z))!r}\n"
    for f, z in zip(np.logspace(3, 6, 16), _impedance(np.logspace(3, 6, 16), 0.05, 2.2e-5, 1e-10),
                    strict=True))


@st.composite
def expression_cases(draw) -> Case:
    """Circuit expressions: well formed, deep, wide, or broken; fitted to a small table of a choke."""
    def node(depth: int) -> str:
        if depth > 3 or draw(st.integers(0, 3)) == 0:
            return draw(st.sampled_from(["R", "L", "C", "P", "X", "r", "Q"])) + draw(
                st.sampled_from(["1", "2", "s", "p", "1", "_a", ""]))
        op = draw(st.sampled_from([" + ", " || ", "+", "||", " | ", " - ", "  "]))
        parts = [node(depth + 1) for _ in range(draw(st.integers(1, 3)))]
        text = op.join(parts)
        return f"({text})" if draw(st.booleans()) else text

    shape = draw(st.sampled_from(["tree", "tree", "tree", "deep", "wide", "junk", "preset"]))
    if shape == "deep":
        depth = draw(st.integers(10, 3000))
        expression = "(" * depth + "R1" + ")" * depth
    elif shape == "wide":
        expression = " + ".join(f"R{k}" for k in range(draw(st.integers(10, 300))))
    elif shape == "junk":
        expression = draw(st.text(max_size=60))
    elif shape == "preset":
        expression = draw(st.sampled_from(["auto", "choke", "CHOKE", "chok", ""]))
    else:
        expression = node(0)
    fitting = shape in ("tree", "preset") and len(expression) < 40
    argv = ["fit", "bench.csv", "--model", expression] if fitting else ["fit", "bench.csv", "--model",
                                                                        expression, "--fix", "Q9=1"]
    return Case("expression", {"bench.csv": _SMALL_TABLE.encode()}, argv, note=shape)


_VALUES = ["1", "-1", "0", "1e-300", "1e300", "-5n", "100m", "1k", "nan", "inf", "2.2uH", "1MEG", "-0",
           "1e-320", "abc", "", "1:2", "-1k:2k", "0.5%:0.2deg", "5%:-1deg", "1:", ":1", "1:1", "100m:10"]
_OPTIONS = ["--shunt", "--reference", "--band", "--noise", "--skew", "--at", "--fix", "--guess", "--bound",
            "--map", "--plot", "--csv", "--json", "--curve", "--spice", "--through", "--load-value",
            "--subckt-name", "--intervals"]


@st.composite
def option_cases(draw) -> Case:
    """Command lines with repeated, conflicting, absurd or negative option values."""
    command = draw(st.sampled_from(["inspect", "inspect", "fit"]))
    argv = [command, "bench.csv"]
    if command == "fit":
        argv += ["--model", draw(st.sampled_from(["Rs + L1 || Cp", "Rs + L1", "choke"]))]
    outputs = []
    for _ in range(draw(st.integers(1, 5))):
        option = draw(st.sampled_from(_OPTIONS))
        if option in ("--plot", "--csv", "--json", "--curve", "--spice"):
            value = draw(st.sampled_from(["out.png", "out.txt", "out", "bench.csv", "./bench.csv", "same.out",
                                          "sub/dir/x.svg", "out.PDF", ".", "bench.csv/x", "d/"]))
            outputs.append(value)
        elif option in ("--fix", "--guess", "--bound"):
            name = draw(st.sampled_from(["Rs", "L1", "Cp", "Zz", "rs", ""]))
            value = f"{name}={draw(st.sampled_from(_VALUES))}"
        elif option == "--map":
            value = draw(st.sampled_from(["frequency=#1", "frequency=#9", "z_magnitude=Nope", "bad", "=#1"]))
        elif option == "--through":
            value = draw(st.sampled_from(["shunt", "series", "other"]))
        elif option == "--intervals":
            value = draw(st.sampled_from(["all", "none", "sometimes"]))
        else:
            value = draw(st.sampled_from(_VALUES))
        joined = draw(st.booleans())
        argv += [f"{option}={value}"] if joined else [option, value]
    outputs = [o for o in outputs if o not in ("bench.csv", "./bench.csv", ".", "d/")]
    return Case("options", {"bench.csv": _SMALL_TABLE.encode()}, argv, outputs=outputs)


FAMILIES: dict[str, Callable[[], st.SearchStrategy[Case]]] = {
    "delimited": delimited_cases,
    "garbage": garbage_cases,
    "touchstone": touchstone_cases,
    "expression": expression_cases,
    "options": option_cases,
}
