"""Outputs under faults: a directory as a target, kills and signals during the writes, failed renames.

Every case checks by SHA-256 that the input and the older outputs are unchanged and that no file (hidden or
not) was left behind.
"""

import hashlib
import os
import shutil
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from fitz_tool.cli import main
from fitz_tool.exceptions import OutputError
from fitz_tool.outputs import atomic
from fitz_tool.outputs.atomic import check_targets, write_outputs

SAMPLE = Path(__file__).resolve().parents[1] / "sample_measurements" / "output_choke_scope.csv"
ROOT = Path(__file__).resolve().parents[1]


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def snapshot(folder: Path) -> dict[str, str]:
    """Every file under ``folder`` (hidden ones too) -> its SHA-256."""
    return {str(p.relative_to(folder)): sha(p) for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture
def bench(tmp_path):
    source = tmp_path / "choke.csv"
    shutil.copy(SAMPLE, source)
    (tmp_path / "old.json").write_text('{"older": "result"}\n')
    (tmp_path / "old.csv").write_text("older,curve\n")
    return tmp_path


def fit_args(folder: Path, *extra: str) -> list[str]:
    return ["fit", str(folder / "choke.csv"), "--shunt", "0.1", "--model", "Rs + L1 || Cp", *extra]


def test_a_directory_as_report_target_writes_nothing_and_keeps_the_older_json(bench, capsys):
    (bench / "reports").mkdir()
    before = snapshot(bench)
    code = main(fit_args(bench, "--json", str(bench / "old.json"), "--curve", str(bench / "new.csv"),
                         "--report", str(bench / "reports")))
    assert code == 5
    err = capsys.readouterr().err
    assert f"{bench / 'reports'}: is a directory" in err and ".part" not in err
    assert snapshot(bench) == before


def test_the_same_path_for_json_and_curve_is_refused_before_the_fit(bench, capsys):
    before = snapshot(bench)
    assert main(fit_args(bench, "--json", str(bench / "x.out"), "--curve", str(bench / "x.out"))) == 5
    assert "given for two outputs" in capsys.readouterr().err
    assert snapshot(bench) == before


def test_two_spellings_of_one_path_are_one_target(bench):
    with pytest.raises(OutputError, match="given for two outputs"):
        check_targets([bench / "a.json", bench / "sub" / ".." / "a.json"])


def test_a_hard_link_of_the_input_is_the_input(bench):
    os.link(bench / "choke.csv", bench / "alias.csv")
    with pytest.raises(OutputError, match="overwrite an input"):
        check_targets([bench / "alias.csv"], [bench / "choke.csv"])


def test_a_folder_without_write_permission_is_named(bench):
    locked = bench / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if os.access(locked, os.W_OK):
            pytest.skip("running as a user who may write anywhere (root)")
        with pytest.raises(OutputError, match=f"{locked / 'r.json'}: no permission to write in {locked}"):
            check_targets([locked / "r.json"])
    finally:
        locked.chmod(0o700)


def test_a_failing_rename_restores_the_outputs_already_replaced(bench, monkeypatch):
    before = snapshot(bench)
    real_replace = os.replace
    calls = []

    def failing_second(src, dst):
        calls.append(dst)
        if len(calls) == 2:
            raise OSError(28, "No space left on device", src)
        return real_replace(src, dst)

    monkeypatch.setattr(atomic.os, "replace", failing_second)
    with pytest.raises(OutputError) as info:
        write_outputs({bench / "old.json": "new json", bench / "old.csv": "new csv"})
    monkeypatch.setattr(atomic.os, "replace", real_replace)
    # the message names the user's file, never the temporary one
    assert str(bench / "old.csv") in str(info.value) and ".part" not in str(info.value)
    assert snapshot(bench) == before


def test_new_folders_are_removed_when_nothing_could_be_written(bench, monkeypatch):
    before = snapshot(bench)

    def no_space(fd, data):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic, "_write_all", no_space)
    with pytest.raises(OutputError, match="No space left"):
        write_outputs({bench / "new" / "deeper" / "r.json": "x"})
    assert snapshot(bench) == before
    assert not (bench / "new").exists()


# A child process runs the real command line and pauses inside the writes; the test then signals it.
_CHILD = textwrap.dedent("""
    import os, sys, time
    from fitz_tool.outputs import atomic
    phase = sys.argv[1]
    real_write, real_replace = atomic._write_all, os.replace
    def pause():
        print("paused", flush=True)
        time.sleep(60)
    def slow_write(fd, data, count=[0]):
        real_write(fd, data)
        count[0] += 1
        if phase == "stage" and count[0] == 2:
            pause()
    def slow_replace(src, dst, count=[0]):
        real_replace(src, dst)
        count[0] += 1
        if phase == "commit" and count[0] == 1:
            pause()
    atomic._write_all = slow_write
    atomic.os.replace = slow_replace
    from fitz_tool.cli import main
    sys.exit(main(sys.argv[2:]))
""")


def run_and_signal(folder: Path, phase: str, signum: int) -> tuple[int, str]:
    args = fit_args(folder, "--json", str(folder / "old.json"), "--curve", str(folder / "old.csv"),
                    "--spice", str(folder / "new.cir"))
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    child = subprocess.Popen([sys.executable, "-c", _CHILD, phase, *args], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, text=True, env=env, cwd=folder)
    try:
        for line in child.stdout:
            if line.strip() == "paused":
                break
        else:
            pytest.fail(f"child never reached the writes: {child.stderr.read()}")
        os.kill(child.pid, signum)
        _, err = child.communicate(timeout=30)
    finally:
        if child.poll() is None:
            child.kill()
            child.wait()
    return child.returncode, err


@pytest.mark.parametrize("phase", ["stage", "commit"])
def test_sigterm_during_the_writes_leaves_input_and_older_outputs_unchanged(bench, phase):
    before = snapshot(bench)
    code, err = run_and_signal(bench, phase, signal.SIGTERM)
    assert code == 143
    assert "terminated; no output written" in err and "Traceback" not in err
    assert snapshot(bench) == before


def test_ctrl_c_during_the_writes_leaves_nothing(bench):
    before = snapshot(bench)
    code, err = run_and_signal(bench, "stage", signal.SIGINT)
    assert code == 130 and "interrupted" in err and "Traceback" not in err
    assert snapshot(bench) == before


def test_a_kill_by_pid_while_staging_leaves_no_file_behind(bench):
    # SIGKILL cannot be caught: the staged files are unnamed (O_TMPFILE), so the kernel drops them.
    before = snapshot(bench)
    code, _ = run_and_signal(bench, "stage", signal.SIGKILL)
    assert code == -signal.SIGKILL
    assert snapshot(bench) == before


def test_a_file_where_a_folder_is_needed_is_named_before_the_fit(bench, capsys):
    before = snapshot(bench)
    assert main(fit_args(bench, "--json", str(bench / "old.csv" / "r.json"))) == 5
    assert f"{bench / 'old.csv'} is a file, not a folder" in capsys.readouterr().err
    assert main(fit_args(bench, "--plot-dir", str(bench / "old.csv"))) == 5
    assert snapshot(bench) == before


def test_outputs_replace_older_ones_when_the_whole_set_succeeds(bench):
    write_outputs({bench / "old.json": "new json", bench / "sub" / "n.txt": b"n"}, [bench / "choke.csv"])
    assert (bench / "old.json").read_text() == "new json" and (bench / "sub" / "n.txt").read_bytes() == b"n"
    assert sorted(p.name for p in bench.iterdir()) == ["choke.csv", "old.csv", "old.json", "sub"]
