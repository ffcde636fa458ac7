"""Options at the command line: repeats, conflicts, ranges, negative values, figure formats, guards."""

import shutil
import warnings
from pathlib import Path

import pytest

from fitz_tool import cli
from fitz_tool.cli import build_parser, join_negative_values, main

SAMPLE = Path(__file__).resolve().parents[1] / "sample_measurements" / "output_choke_scope.csv"


@pytest.fixture
def choke(tmp_path):
    source = tmp_path / "choke.csv"
    shutil.copy(SAMPLE, source)
    return source


def fit(choke, *extra):
    return main(["fit", str(choke), "--shunt", "0.1", "--model", "Rs + L1 || Cp", *extra])


@pytest.mark.parametrize("extra, message", [
    (["--fix", "Rs=1", "--fix", "Rs=2"], "--fix Rs given twice"),
    (["--guess", "L1=1u", "--guess", "L1=2u"], "--guess L1 given twice"),
    (["--bound", "Rs=1:2", "--bound", "Rs=1:3"], "--bound Rs given twice"),
    (["--fix", "Rs=1", "--bound", "Rs=2:3"], "--fix Rs=1 lies outside its --bound Rs=2:3"),
    (["--guess", "Rs=5", "--bound", "Rs=2:3"], "--guess Rs=5 lies outside"),
    (["--fix", "Rs=1", "--guess", "Rs=1"], "--fix Rs and --guess Rs"),
    (["--bound", "Rs=3:2"], "low limit must be below the high limit"),
    (["--fix", "Rs=nan"], "cannot read --fix Rs"),
    (["--at", "1e-300"], "--at 1e-300 Hz: outside"),
    (["--at", "1e300"], "--at 1e+300 Hz: outside"),
    (["--reference", "1e-300"], "--reference 1e-300 ohm: outside"),
    (["--skew", "1e30"], "--skew"),
])
def test_conflicting_or_absurd_options_are_one_line_errors(choke, capsys, extra, message):
    assert fit(choke, *extra) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1 and "Traceback" not in err


def test_negative_values_parse_without_equals():
    parser = build_parser()
    argv = ["fit", "f.csv", "--model", "R1", "--skew", "-5n", "--band", "-1k:2k", "--fix", "Rs=-1",
            "--at", "-.5"]
    joined = join_negative_values(argv, parser)
    assert joined == ["fit", "f.csv", "--model", "R1", "--skew=-5n", "--band=-1k:2k", "--fix", "Rs=-1",
                      "--at=-.5"]
    args = parser.parse_args(joined)
    assert args.skew == "-5n" and args.at == ["-.5"]
    # an option name after an option is still an option
    assert join_negative_values(["--json", "--curve"], parser) == ["--json", "--curve"]


def test_a_negative_skew_fits(choke, capsys):
    assert fit(choke, "--skew", "-5n") == 0
    assert "error" not in capsys.readouterr().err


def test_plot_with_an_unsupported_extension_lists_the_formats(choke, capsys, tmp_path):
    code = main(["inspect", str(choke), "--shunt", "0.1", "--plot", str(tmp_path / "out.txt")])
    assert code == 2
    err = capsys.readouterr().err
    assert "'.txt' is not a figure format" in err and ".png" in err and ".svg" in err
    assert not (tmp_path / "out.txt").exists()


@pytest.mark.parametrize("model, message", [
    ("(" * 400 + "R1" + ")" * 400, "nests parentheses 400 deep"),
    (" + ".join(f"R{k}" for k in range(100)), "has 100 elements"),
    ("R1 + " * 5000 + "R2", "characters long"),
])
def test_model_limits_refuse_before_parsing_without_repeating_the_expression(choke, capsys, model, message):
    assert main(["fit", str(choke), "--shunt", "0.1", "--model", model]) == 3
    err = capsys.readouterr().err
    assert message in err and len(err) < 300


def test_memory_exhaustion_is_one_line(choke, capsys, monkeypatch):
    def exhausted(args):
        raise MemoryError

    monkeypatch.setattr(cli, "load_from_args", exhausted)
    assert main(["inspect", str(choke)]) == 1
    assert capsys.readouterr().err == ("fitz-tool: error: out of memory; use fewer points (--band) or a "
                                       "smaller model\n")


def test_deep_recursion_is_one_line(choke, capsys, monkeypatch):
    def deep(args):
        return deep(args)

    monkeypatch.setattr(cli, "load_from_args", deep)
    assert main(["inspect", str(choke)]) == 3
    assert "nested too deeply" in capsys.readouterr().err


def test_an_unexpected_error_is_one_line_and_asks_for_a_report(choke, capsys, monkeypatch):
    def broken(args):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(cli, "load_from_args", broken)
    monkeypatch.delenv("FITZ_TOOL_DEBUG", raising=False)
    assert main(["inspect", str(choke)]) == 1
    err = capsys.readouterr().err
    assert err.startswith("fitz-tool: internal error: ZeroDivisionError") and err.count("\n") == 1


def test_no_python_warning_reaches_the_user(choke, capsys, monkeypatch):
    real = cli.load_from_args

    def noisy(args):
        warnings.warn("divide by zero encountered", RuntimeWarning, stacklevel=1)
        return real(args)

    monkeypatch.setattr(cli, "load_from_args", noisy)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning that escaped would fail the command
        assert main(["inspect", str(choke), "--shunt", "0.1"]) == 0
    assert "Warning" not in capsys.readouterr().err


@pytest.mark.parametrize("argv, message", [
    (["--shunt", "0.1", "--shunt", "0.2"], "--shunt given twice"),
    (["--shunt=0.1", "--json", "a.json", "--json=b.json"], "--json given twice"),
    (["--shunt", "0.1", "--plot", "a", "--plot-dir", "b"], "--plot-dir given twice"),  # an abbreviation
])
def test_a_single_value_option_given_twice_is_an_error(choke, capsys, argv, message):
    with pytest.raises(SystemExit) as info:
        main(["fit", str(choke), "--model", "Rs + L1", *argv])
    assert info.value.code == 2
    assert message in capsys.readouterr().err


def test_a_duplicate_element_is_pointed_at_its_second_whole_name():
    from fitz_tool.circuit import Circuit
    from fitz_tool.exceptions import ModelSyntaxError

    with pytest.raises(ModelSyntaxError) as info:
        Circuit.parse("L10 + L1 + L1")  # "L1" inside "L10" is another element
    assert info.value.column == 12
