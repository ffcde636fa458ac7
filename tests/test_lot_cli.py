"""`fitz-tool lot` and `fitz-tool compare` end to end: manifest with a condition, exit codes, resume after a
kill, rebuild from the store."""

from __future__ import annotations

import os
import re
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fitz_tool.cli import main
from fitz_tool.lot import ResultStore
from tests.lot_data import MODEL, impedance, make_lot, write_part

ROOT = Path(__file__).resolve().parents[1]


def _bias_lot(folder: Path) -> dict[float, float]:
    """Four parts at four DC bias currents; L(I) = 22 uH / (1 + (I / 8 A)^2) (invented law)."""
    folder.mkdir()
    rng = np.random.default_rng(3)
    truth = {}
    rows = ["file,part,bias_A,shunt"]
    for k, bias in enumerate((0.0, 2.0, 4.0, 8.0)):
        L = 22e-6 / (1 + (bias / 8.0) ** 2)
        z = impedance(L, 0.05) * (1 + 1e-3 * rng.standard_normal(21))
        path = write_part(folder / f"choke_{k}", z, k % 2)
        rows.append(f"{path.name},C{k},{bias:g},")
        truth[bias] = L
    (folder / "manifest.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return truth


def test_manifest_route_carries_the_condition_column_and_shows_saturation(tmp_path, capsys):
    truth = _bias_lot(tmp_path / "bias")
    table, report = tmp_path / "out" / "lot.csv", tmp_path / "out" / "lot.html"
    code = main(["lot", "--manifest", str(tmp_path / "bias" / "manifest.csv"), "--model", MODEL,
                 "--spec", "L1=22u+-20%", "--table", str(table), "--report", str(report), "--workers", "1"])
    assert code == 0
    printed = capsys.readouterr().out
    assert "Lot: 4 files, 4 with a result, 0 errors" in printed and str(table) in printed
    data = pd.read_csv(table)
    assert list(data["bias_A"]) == [0, 2, 4, 8] and list(data["part"]) == ["C0", "C1", "C2", "C3"]
    for bias, L in truth.items():
        row = data[data["bias_A"] == bias].iloc[0]
        assert abs(row["L1"] - L) < 5 * row["L1_stderr"]
    # limits 17.6 uH .. 26.4 uH: 22 uH (0 A) and 20.7 uH (2 A) inside; at 4 A the truth is 22 uH / 1.25 =
    # 17.6 uH, on the limit itself, so within U of it: marginal; 11 uH at 8 A far below: fail
    assert list(data["spec_L1"]) == ["pass", "pass", "marginal", "fail"]
    html = report.read_text()
    assert "L1 against bias_A" in html and "Histogram of L1" in html and "Safety" in html
    assert (tmp_path / "out" / "fitz_results.sqlite").exists()


def test_unreadable_files_give_exit_1_and_the_table_is_still_written(tmp_path, capsys):
    make_lot(tmp_path / "parts", n=3)
    table = tmp_path / "lot.csv"
    code = main(["lot", str(tmp_path / "parts"), "--model", MODEL, "--table", str(table), "--workers", "1"])
    assert code == 1
    data = pd.read_csv(table)
    assert list(data["status"]) == ["ok", "ok", "ok", "error", "error"]
    assert "Files without a result" in capsys.readouterr().out


@pytest.mark.parametrize("argv, message", [
    (["lot", "nowhere/*.csv", "--model", MODEL], "matches no file"),
    (["lot", "X", "--from-store", "s.sqlite"], "give no files"),
    (["lot", "{folder}", "--model", MODEL, "--spec", "L1=22u"], "--spec"),
    (["lot", "{folder}", "--model", MODEL, "--spec", "Cx=1:2"], "not a parameter"),
    (["lot", "{folder}", "--model", MODEL, "--workers", "0"], "--workers"),
    (["lot", "{folder}"], "--model"),
])
def test_usage_errors_exit_2_with_one_line(tmp_path, capsys, argv, message):
    make_lot(tmp_path / "parts", n=2)
    argv = [a.replace("{folder}", str(tmp_path / "parts")) for a in argv]
    assert main([*argv, "--table", str(tmp_path / "t.csv"), "--workers", "1"] if "--workers" not in argv
                else [*argv, "--table", str(tmp_path / "t.csv")]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err and err.count("\n") == 1


def test_a_killed_lot_resumes_without_losing_or_refitting_anything(tmp_path):
    make_lot(tmp_path / "parts", n=30)
    store, table = tmp_path / "store.sqlite", tmp_path / "lot.csv"
    argv = [sys.executable, "-m", "fitz_tool.cli", "lot", str(tmp_path / "parts"), "--model", MODEL,
            "--intervals", "all", "--table", str(table), "--store", str(store), "--workers", "1"]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    process = subprocess.Popen(argv, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    done = 0
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and process.poll() is None:
        if store.exists():
            try:
                with sqlite3.connect(store) as db:
                    done = db.execute("SELECT COUNT(*) FROM fits").fetchone()[0]
            except sqlite3.OperationalError:
                done = 0
            if done >= 4:
                break
        time.sleep(0.01)
    os.kill(process.pid, signal.SIGKILL)
    process.wait()
    assert not table.exists(), "the run finished before it could be interrupted"
    with ResultStore(store) as db:
        before = db.fit_counts()
        assert db.runs()[-1]["finished"] is None
    assert 4 <= len(before) < 32
    assert main(argv[3:]) == 1  # the two unreadable files
    with ResultStore(store) as db:
        after = db.fit_counts()
        runs = db.runs()
    assert set(before) <= set(after) and len(after) == 32 and set(after.values()) == {1}
    assert runs[-1]["finished"] is not None
    data = pd.read_csv(table)
    assert (data["status"] == "ok").sum() == 30 and len(data) == 32
    rebuilt = tmp_path / "rebuilt.csv"
    assert main(["lot", "--from-store", str(store), "--table", str(rebuilt)]) == 1
    pd.testing.assert_frame_equal(pd.read_csv(rebuilt), data)


def test_compare_prints_differences_in_combined_uncertainties(tmp_path, capsys):
    rng = np.random.default_rng(8)
    a = write_part(tmp_path / "a", impedance(22e-6, 0.05) * (1 + 1e-3 * rng.standard_normal(21)), 0)
    b = write_part(tmp_path / "b", impedance(24.2e-6, 0.05) * (1 + 1e-3 * rng.standard_normal(21)), 1)
    out, report = tmp_path / "diff.csv", tmp_path / "compare.html"
    argv = ["compare", str(a), str(b), "--model", MODEL, "--table", str(out), "--report", str(report)]
    assert main(argv) == 0
    assert "Measured |Z| and phase of every part" in report.read_text()
    printed = capsys.readouterr().out
    assert "b - a" in printed
    assert re.search(r"^ *L1 .*\(\+(9\.9\d|10\.0\d) %", printed, flags=re.MULTILINE)
    diff = pd.read_csv(out).set_index("quantity")
    assert diff.loc["L1", "b-a_rel"] == pytest.approx(0.10, abs=0.005)
    assert main(["compare", str(a), "--model", MODEL]) == 2


@pytest.mark.parametrize("manifest, message", [
    ("part,bias_A\nC1,0\n", "no 'file' column"),
    ("file,part\n,C1\n", "row 2: column 'file' is empty"),
    ("file,part\na.csv,C1\na.csv,C2\n", "listed twice"),
    ("file,part\n", "lists no file"),
])
def test_bad_manifests_are_refused_naming_the_row(tmp_path, capsys, manifest, message):
    path = tmp_path / "manifest.csv"
    path.write_text(manifest, encoding="utf-8")
    assert main(["lot", "--manifest", str(path), "--model", MODEL, "--table", str(tmp_path / "t.csv")]) == 2
    err = capsys.readouterr().err
    assert message in err and str(path) in err
    assert not (tmp_path / "t.csv").exists()


def test_a_parquet_table_reads_back_equal_to_the_csv_table(tmp_path):
    """The same lot written as CSV and as Parquet: pandas (pyarrow engine) reads the same rows back
    (the CSV keeps 10 significant digits, so numbers agree to 1e-9 relative)."""
    pytest.importorskip("pyarrow")
    make_lot(tmp_path / "parts", n=3)
    csv_table, parquet_table = tmp_path / "lot.csv", tmp_path / "lot.parquet"
    store = tmp_path / "store.sqlite"
    for table in (csv_table, parquet_table):
        assert main(["lot", str(tmp_path / "parts"), "--model", MODEL, "--table", str(table),
                     "--store", str(store), "--workers", "1"]) == 1
    from_csv, from_parquet = pd.read_csv(csv_table), pd.read_parquet(parquet_table)
    assert list(from_parquet.columns) == list(from_csv.columns)
    assert list(from_parquet["status"]) == ["ok", "ok", "ok", "error", "error"]
    numbers = [c for c in from_csv.columns if c.startswith("L1")]
    assert numbers and np.allclose(from_parquet[numbers].to_numpy(float), from_csv[numbers].to_numpy(float),
                                   rtol=1e-9, equal_nan=True)
    assert from_parquet.loc[3, "error"] == from_csv.loc[3, "error"]


def test_parquet_without_pyarrow_is_one_line_before_any_fit_and_writes_nothing(tmp_path, capsys,
                                                                               monkeypatch):
    import fitz_tool.lot.table as table_module

    monkeypatch.setattr(table_module, "parquet_available", lambda: False)
    make_lot(tmp_path / "parts", n=3)
    table, store = tmp_path / "lot.parquet", tmp_path / "store.sqlite"
    code = main(["lot", str(tmp_path / "parts"), "--model", MODEL, "--table", str(table),
                 "--store", str(store), "--workers", "1"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 5, err
    assert len(err) == 1 and str(table) in err[0] and "pyarrow" in err[0]
    assert not table.exists() and not store.exists()  # refused before any part was fitted
