"""The work budget of a fit (time, model evaluations): a clear one-line stop, exit 4, nothing written."""

import hashlib
import shutil
from pathlib import Path

import numpy as np
import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import InputError, WorkLimitError
from fitz_tool.fitting import work
from fitz_tool.fitting.least_squares import fit
from fitz_tool.fitting.selection import fit_auto
from fitz_tool.readers import ReadOptions, read_measurement

SAMPLE = Path(__file__).resolve().parents[1] / "sample_measurements" / "output_choke_scope.csv"
MODEL = "Rs + L1 || Cp"


@pytest.fixture(scope="module")
def measurement():
    return read_measurement(SAMPLE, ReadOptions(shunt=0.1))


def all_outputs(folder: Path) -> list[str]:
    return ["--json", str(folder / "r.json"), "--curve", str(folder / "c.csv"), "--spice",
            str(folder / "p.cir"), "--report", str(folder / "r.html"), "--plot-dir", str(folder / "plots")]


def test_a_tiny_time_budget_on_a_real_fit_stops_with_one_line_exit_4_and_nothing_written(tmp_path, capsys):
    source = tmp_path / "choke.csv"
    shutil.copy(SAMPLE, source)
    before = hashlib.sha256(source.read_bytes()).hexdigest()
    code = main(["fit", str(source), "--shunt", "0.1", "--model", MODEL, "--max-time", "1e-6",
                 *all_outputs(tmp_path / "out")])
    captured = capsys.readouterr()
    assert code == 4
    assert captured.out == ""
    assert captured.err == ("fitz-tool: error: the fit stopped at its time limit of 1e-06 s (--max-time): "
                            "reduce the points (--band or a coarser sweep), the model elements (or --fix "
                            "some), the auto candidates (name one model instead of auto) or --jobs, or "
                            "raise --max-time; nothing was written\n")
    assert sorted(p.name for p in tmp_path.rglob("*")) == ["choke.csv"]
    assert hashlib.sha256(source.read_bytes()).hexdigest() == before


def test_an_evaluation_cap_on_auto_stops_the_whole_selection(tmp_path, capsys):
    code = main(["fit", str(SAMPLE), "--shunt", "0.1", "--model", "auto", "--max-evaluations", "5000",
                 "--json", str(tmp_path / "r.json")])
    err = capsys.readouterr().err
    assert code == 4
    assert err.count("\n") == 1
    assert "work limit of 5,000 model evaluations (--max-evaluations)" in err
    assert not (tmp_path / "r.json").exists()


@pytest.mark.parametrize("value", ["0", "-3", "nan", "inf"])
def test_a_budget_that_is_not_a_positive_number_is_refused(value, capsys):
    assert main(["fit", str(SAMPLE), "--shunt", "0.1", "--model", MODEL, "--max-time", value]) == 2
    assert capsys.readouterr().err.startswith(f"fitz-tool: error: --max-time {value}: give a positive")


def test_the_api_takes_the_budget_as_parameters(measurement):
    with pytest.raises(WorkLimitError, match=r"time limit of 1e-09 s"):
        fit(measurement, MODEL, max_time=1e-9)
    # One residual over the file already costs len(measurement) evaluations: a cap below that stops at once.
    with pytest.raises(WorkLimitError, match=f"work limit of {len(measurement) - 1:,} model evaluations"):
        fit_auto(measurement, jobs=1, max_evaluations=len(measurement) - 1)
    assert work._ACTIVE.get() is None  # the budget ends with the call, also when it ran out
    with pytest.raises(InputError, match="max_time=-1"):
        fit(measurement, MODEL, max_time=-1)


def test_the_budget_does_not_change_a_fit_that_stays_inside_it(measurement):
    bounded = fit(measurement, MODEL)
    free = fit(measurement, MODEL, max_time=None, max_evaluations=None)
    def values(result):
        return {name: p.value for name, p in result.parameters.items()}

    assert values(bounded) == values(free)
    assert bounded.chi_square == free.chi_square


def test_evaluations_are_counted_per_impedance_value(measurement):
    from fitz_tool.circuit import Circuit
    from fitz_tool.fitting.problem import problem_for

    circuit = Circuit.parse(MODEL)
    problem = problem_for(circuit, measurement, circuit.parameter_names, {})
    x = np.zeros(len(circuit.parameter_names))
    n = len(measurement)
    with work.work_budget(None, None):
        problem.residual(x)
        assert work._ACTIVE.get().used == n
        problem.jacobian(x)
        assert work._ACTIVE.get().used == n + 3 * n
        problem.batch_cost(np.zeros((5, 3)))
        assert work._ACTIVE.get().used == 4 * n + 5 * n


def test_each_thread_has_its_own_budget(measurement):
    # a fit with a tiny budget in one thread stops; a fit in another thread at the same time does not share
    # that budget (nor does a thread started inside a budgeted block inherit it)
    import threading

    outcome = {}

    def tiny():
        try:
            fit(measurement, MODEL, max_evaluations=len(measurement) - 1)
        except WorkLimitError as error:
            outcome["tiny"] = str(error)

    def free():
        outcome["free"] = fit(measurement, MODEL, max_time=None, max_evaluations=None).chi_square

    with work.work_budget(None, max_evaluations=1):
        threads = [threading.Thread(target=tiny), threading.Thread(target=free)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
        assert work._ACTIVE.get().used == 0  # nothing the threads did was charged here
    assert "work limit" in outcome["tiny"]
    assert outcome["free"] == fit(measurement, MODEL).chi_square
