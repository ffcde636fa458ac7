"""Parameter values typed as engineers type them: units checked against the element, 0 as a lower bound."""


from fitz_tool.cli import main

CHOKE = "sample_measurements/output_choke_scope.csv"
MODEL = "(Rs + L1 || Rcore) || Cp"


def run(capsys, *extra):
    code = main(["fit", CHOKE, "--shunt", "0.1", "--model", MODEL, "--intervals", "none", *extra])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_fixed_value_with_its_unit_is_held(capsys):
    code, out, _ = run(capsys, "--fix", "Cp=12pF")
    assert code == 0
    line = next(s for s in out.splitlines() if s.strip().startswith("Cp "))
    assert "12" in line and "fixed" in line


def test_guess_and_bound_with_units(capsys):
    code, out, _ = run(capsys, "--guess", "L1=10uH", "--bound", "Rs=0:100mOhm")
    assert code == 0
    assert any(s.strip().startswith("L1 ") and "uH" in s.replace("\u00b5", "u") for s in out.splitlines())


def test_a_unit_that_is_not_the_elements_is_refused(capsys):
    code, _, err = run(capsys, "--fix", "Cp=12pH")
    assert code == 2
    assert "Cp" in err and "'H' is not F" in err and "Traceback" not in err
    code, _, err = run(capsys, "--bound", "Rs=0:10mH")
    assert code == 2 and "is not ohm" in err
