"""A lot of 32 generated parts in four layouts plus two unreadable files: table, verdicts, store, process
pool and Dask."""

from __future__ import annotations

import math

import pandas as pd
import pytest

from fitz_tool.cli import main
from fitz_tool.lot import LotSettings, ResultStore, collect_files, run_lot, table_from_store
from tests.lot_data import MODEL, NOMINAL_L, make_lot

SPEC = "L1=22u+-10%"


@pytest.fixture(scope="module")
def lot(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lot")
    truth = make_lot(folder / "parts")
    store = folder / "results.sqlite"
    items = collect_files([str(folder / "parts")])
    settings = LotSettings(model=MODEL, at={"100k": 100e3}, specs=(SPEC, "ESR@100k=:1"))
    result = run_lot(items, settings, store=store, workers=2)
    return truth, store, items, settings, result


def test_every_file_has_a_row_and_the_unreadable_ones_are_errors(lot):
    truth, _, items, _, result = lot
    table = result.table
    assert len(items) == 34 and len(table) == 34
    errors = table[table["status"] == "error"]
    assert sorted(errors["part"]) == ["part_90_garbage", "part_91_empty"]
    assert all(errors["error"].str.len() > 10) and set(errors["verdict"]) == {"error"}
    assert result.n_errors == 2 and result.fitted == 34 and result.reused == 0


def test_values_agree_with_the_truth_within_their_uncertainty(lot):
    truth, _, _, _, result = lot
    table = result.table.set_index("file")
    for file, values in truth.items():
        row = table.loc[file]
        assert row["status"] == "ok", row["error"]
        for name, true in values.items():
            assert abs(row[name] - true) < 5 * row[f"{name}_stderr"], (file, name)
        # series R-L: ESR = Rs at every frequency (common practice, no source)
        assert row["ESR@100k"] == pytest.approx(row["Rs"], rel=1e-9)
        # L_eff = X / w = L1 for a series R-L (common practice, no source)
        assert row["L_eff@100k"] == pytest.approx(row["L1"], rel=1e-9)


def test_verdicts_follow_the_truth(lot):
    truth, _, _, _, result = lot
    table = result.table.set_index("file")
    for file, values in truth.items():
        inside = abs(values["L1"] / NOMINAL_L - 1) < 0.05
        expected = "pass" if inside else "fail"
        assert table.loc[file, "spec_L1"] == expected, file
        assert table.loc[file, "verdict"] == expected, file
    counts = table["verdict"].value_counts()
    assert counts["fail"] == sum(1 for v in truth.values() if abs(v["L1"] / NOMINAL_L - 1) > 0.05)


def test_a_rerun_reuses_every_stored_result_and_the_store_rebuilds_the_table(lot):
    _, store, items, settings, result = lot
    again = run_lot(items, settings, store=store, workers=1)
    assert again.reused == 34 and again.fitted == 0
    pd.testing.assert_frame_equal(again.table, result.table)
    rebuilt = table_from_store(store)
    pd.testing.assert_frame_equal(rebuilt.table, result.table)
    with ResultStore(store) as db:
        counts = db.fit_counts()
    assert len(counts) == 34 and set(counts.values()) == {1}


def test_refit_fits_again_and_the_store_counts_it(lot, tmp_path):
    _, store, items, settings, _ = lot
    copy = tmp_path / "copy.sqlite"
    copy.write_bytes(store.read_bytes())
    wal = store.with_name(store.name + "-wal")
    if wal.exists():
        copy.with_name(copy.name + "-wal").write_bytes(wal.read_bytes())
    run_lot(items[:3], settings, store=copy, workers=1, refit=True)
    with ResultStore(copy) as db:
        counts = sorted(db.fit_counts().values())
    assert counts.count(2) == 3


def test_auto_chooses_one_model_for_the_lot(lot):
    _, _, items, _, _ = lot
    readable = [i for i in items if "part_9" not in i.part][:3]
    result = run_lot(readable, LotSettings(model="auto"), workers=1)
    assert result.lot_model is not None and set(result.table["model"]) == {result.lot_model}
    assert "total BIC" in result.model_note
    assert not math.isnan(result.table["SRF"].iloc[0]) or "L1" in result.table or "Ls" in result.table


def test_dask_local_cluster_gives_the_same_table_as_the_process_pool(lot, tmp_path):
    distributed = pytest.importorskip("distributed")
    _, _, items, settings, result = lot
    table = tmp_path / "dask.csv"
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        with distributed.Client(cluster) as client:
            on_dask = run_lot(items, settings, executor=client)
        # the command line's route: --scheduler ADDRESS (its own client, closed after the lot)
        code = main(["lot", *(i.file for i in items[:4]), "--model", MODEL, "--spec", SPEC, "--table",
                     str(table), "--store", str(tmp_path / "dask.sqlite"), "--scheduler",
                     cluster.scheduler_address])
    assert on_dask.fitted == 34 and on_dask.n_errors == 2, set(on_dask.table["error"])
    pd.testing.assert_frame_equal(on_dask.table, result.table)
    assert code == 0
    from_cli = pd.read_csv(table)
    expected = result.table.set_index("file").loc[from_cli["file"]]
    assert list(from_cli["L1"]) == pytest.approx(list(expected["L1"]), rel=1e-12)
    assert list(from_cli["spec_L1"]) == list(expected["spec_L1"])


def test_progress_bar_counts_parts_on_stderr(lot, capsys):
    _, _, items, settings, _ = lot
    run_lot(items[:2], settings, workers=1, progress=True)
    err = capsys.readouterr().err
    assert "fitting" in err and "2/2" in err and "failed=0" in err


def test_verdicts_use_the_budget_expanded_uncertainty(lot):
    _, _, items, _, result = lot
    inside = [i for i in items if "part_9" not in i.part and int(i.part[-2:]) % 3 != 2][:3]
    noise_only = result.table.set_index("file")
    stated = run_lot(inside, LotSettings(model=MODEL, specs=("L1=22u+-4%",), budget={"accuracy": "5%:0deg"}),
                     workers=1).table.set_index("file")
    for item in inside:
        L = stated.loc[item.file, "L1"]
        # a +/- 5 % |Z| limit is a rectangular input with u = a / sqrt(3) (GUM 4.3.7); L scales with |Z|, so
        # u(L) / L = 0.05 / sqrt(3), far above the noise; U = k u_c with k = 2 for large nu_eff (GUM G.6.4)
        assert stated.loc[item.file, "L1_U"] == pytest.approx(2 * L * 0.05 / math.sqrt(3), rel=0.02)
        assert noise_only.loc[item.file, "L1_U"] < 0.01 * L
        # 22 uH +/- 4 % cannot be confirmed with U of about 5.8 %: marginal, never pass
        assert stated.loc[item.file, "spec_L1"] == "marginal"


def test_a_failing_worker_gives_error_rows_and_is_not_stored(lot, tmp_path):
    from concurrent.futures import Future

    class BrokenExecutor:
        """An executor whose every job fails, as a crashed worker process would (no real pool needed)."""

        def submit(self, fn, *args):
            future = Future()
            future.set_exception(RuntimeError("worker process died"))
            return future

    _, _, items, settings, _ = lot
    store = tmp_path / "s.sqlite"
    result = run_lot(items[:2], settings, store=store, executor=BrokenExecutor())
    assert list(result.table["status"]) == ["error", "error"]
    assert all("worker process died" in e and "run the lot again" in e for e in result.table["error"])
    with ResultStore(store) as db:
        assert db.fit_counts() == {}


def test_the_noise_shape_reaches_every_part_and_keys_the_store(lot, tmp_path):
    """A fixed-model lot fits each part as `fitz-tool fit` does: with the noise model from the data by
    default, with the single shape when asked; the two are stored under different keys."""
    _, store, items, settings, result = lot
    single = run_lot(items, LotSettings(model=MODEL, at=settings.at, specs=settings.specs,
                                        noise_shape="single"), store=store, workers=1)
    assert single.reused == 0 and single.fitted == len(items)
    ok = [k for k, p in result.payloads.items() if p["status"] == "ok"]
    for key in ok:
        record = result.payloads[key]["candidates"][MODEL]
        assert "single-shape model" in record["fit"]["noise_model"] or "from the data" in record["fit"][
            "noise_model"]
    for payload in single.payloads.values():
        if payload["status"] == "ok":
            assert payload["candidates"][MODEL]["fit"]["noise_model"] == ""
