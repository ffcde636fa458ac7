"""Run a lot: plan the jobs, reuse stored results, fit the rest on a process pool or a Dask cluster, and
assemble the table.

The executor is anything with the ``concurrent.futures`` interface (``submit`` returning futures):
a ``ProcessPoolExecutor`` (the default, ``workers`` processes), a Dask ``distributed.Client`` (``scheduler``
address or a client passed in), or, with one worker, the parent process itself. Results come back to the
parent, which alone writes the store (one transaction per task of several parts, as each arrives).

With ``model="auto"`` every default candidate is fitted to every file, and one model is chosen for the
whole lot, so the table's columns mean the same in every row (rule of :func:`choose_models`); with
``per_file_model=True`` each file keeps its own automatic choice.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import Executor, ProcessPoolExecutor
from concurrent.futures import as_completed as _futures_as_completed
from dataclasses import asdict, dataclass, field
from pathlib import Path

import pandas as pd

from .. import __version__
from ..exceptions import InputError
from ..fitting.selection import BIC_MARGIN
from ..measurement import file_sha256
from ..presets import resolve_model
from ..progress import bar as progress_bar
from ..progress import shown
from ..units import parse_quantity
from .inputs import LotItem
from .job import PartJob, run_part, run_parts
from .spec import Spec, parse_spec, split_design_name
from .store import ResultStore, result_key
from .table import known_names, lot_table

__all__ = ["LotSettings", "LotResult", "run_lot", "table_from_store", "choose_models", "default_workers"]


def default_workers() -> int:
    """Worker processes by default: the cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not every platform has sched_getaffinity
        return max(1, os.cpu_count() or 1)


@dataclass(frozen=True)
class LotSettings:
    """How every file of a lot is read, fitted and judged.

    Attributes
    ----------
    model : str
        Expression, preset name or ``"auto"``.
    reading : dict
        Reading and correction options as text (``fitz_tool.lot.job.READING_FIELDS``); a manifest's
        per-file options override them.
    fixed, guesses, bounds, intervals, noise_shape
        As for :func:`fitz_tool.fit` (SI). With ``auto`` and one model for the lot, the candidates' fits
        are those ranked with the single noise shape (their BICs are summed over the lot).
    at : dict of str to float
        Frequency label (as written, e.g. ``"100k"``) -> operating frequency in Hz for design values.
    specs : tuple of str
        Spec limits (syntax in :mod:`fitz_tool.lot.spec`); their design-value frequencies are added to ``at``.
    per_file_model : bool
        With ``auto``: keep each file's own choice instead of one model for the lot.
    budget : dict
        Stated accuracy limits as text (``fitz_tool.lot.job.BUDGET_FIELDS``) for the uncertainty budget
        whose expanded uncertainty guard-bands the verdicts; empty: noise only.
    """

    model: str = "auto"
    reading: dict = field(default_factory=dict)
    fixed: dict = field(default_factory=dict)
    guesses: dict = field(default_factory=dict)
    bounds: dict = field(default_factory=dict)
    intervals: str = "flagged"
    noise_shape: str = "estimate"
    at: dict = field(default_factory=dict)
    specs: tuple[str, ...] = ()
    per_file_model: bool = False
    budget: dict = field(default_factory=dict)

    @property
    def is_auto(self) -> bool:
        return self.model.strip().lower() == "auto"

    def parsed_specs(self) -> tuple[Spec, ...]:
        specs = tuple(parse_spec(text) for text in self.specs)
        names = [s.name for s in specs]
        repeated = sorted({n for n in names if names.count(n) > 1})
        if repeated:
            raise InputError(f"--spec {repeated[0]} is given twice; give one limit per quantity")
        return specs

    def frequencies(self) -> dict[str, float]:
        """Every operating frequency: ``at`` plus those named by specs (label -> Hz)."""
        at = dict(self.at)
        for spec in self.parsed_specs():
            design = split_design_name(spec.name)
            if design is not None and design[1] not in at:
                at[design[1]] = parse_quantity(design[1], "Hz", f"--spec {spec.name} frequency")
        return at


@dataclass
class LotResult:
    """What a lot run produced.

    ``fitted`` counts parts fitted in this run, ``reused`` those taken from the store; ``lot_model`` is the
    one model of the table (None with per-file models) and ``model_note`` says how it was chosen.
    """

    table: pd.DataFrame
    items: list[dict]
    payloads: dict[str, dict]
    models: dict[str, str]
    lot_model: str | None
    model_note: str
    specs: tuple[Spec, ...]
    at: dict[str, float]
    fitted: int = 0
    reused: int = 0
    run_id: int | None = None

    @property
    def n_errors(self) -> int:
        return int((self.table["status"] != "ok").sum())


def _jobs(items: Sequence[LotItem], settings: LotSettings,
          at: Mapping[str, float]) -> list[tuple[dict, PartJob]]:
    model = settings.model if settings.is_auto else resolve_model(settings.model)
    frequencies = tuple(sorted(set(at.values())))
    planned = []
    for item in items:
        reading = {k: v for k, v in settings.reading.items() if v not in (None, "", [])}
        reading.update(item.options)
        job = PartJob(file=item.file, reading=reading, model=model, fixed=dict(settings.fixed),
                      guesses=dict(settings.guesses), bounds={k: list(v) for k, v in settings.bounds.items()},
                      intervals=settings.intervals, noise_shape=settings.noise_shape, at=frequencies,
                      budget={k: v for k, v in settings.budget.items() if v not in (None, "")})
        sha = file_sha256(item.file)
        standards = [file_sha256(path) for path in job.standards()]
        options = {"reading": reading, "fixed": job.fixed, "guesses": job.guesses, "bounds": job.bounds,
                   "intervals": job.intervals, "noise_shape": job.noise_shape, "at": list(frequencies),
                   "budget": job.budget}
        key = result_key(sha, standards, model, options, __version__)
        storable = bool(sha) and all(standards)
        planned.append(({"file": item.file, "part": item.part, "conditions": dict(item.conditions),
                         "key": key, "sha256": sha, "storable": storable, "options": options}, job))
    return planned


def _as_completed(executor, futures):
    if type(executor).__module__.split(".")[0] == "distributed":
        from distributed import as_completed

        return as_completed(futures)
    return _futures_as_completed(futures)


#: At most this many parts go to a worker in one task: fewer round trips, while a killed run loses little
#: and the progress bar still moves.
CHUNK_PARTS = 8


def chunked(keys: Sequence[str], workers: int) -> list[list[str]]:
    """Keys in tasks of several parts: about four tasks per worker or more, at most ``CHUNK_PARTS`` each."""
    size = max(1, min(CHUNK_PARTS, len(keys) // (4 * max(1, workers))))
    return [list(keys[i:i + size]) for i in range(0, len(keys), size)]


def _process_pool(workers: int) -> ProcessPoolExecutor:
    """A process pool whose workers have the fitting code imported.

    With ``fork`` (where the platform has it and this process runs no other thread) a worker starts as a copy
    of this process, imports done; otherwise a fork server imports them once for all workers.
    """
    import importlib
    import multiprocessing
    import threading

    modules = ["fitz_tool.lot.job", "fitz_tool.cli", "fitz_tool.fitting.selection", "fitz_tool.derived",
               "fitz_tool.outputs.report", "fitz_tool.budget"]
    if "fork" in multiprocessing.get_all_start_methods() and threading.active_count() == 1:
        for name in modules:
            importlib.import_module(name)
        context = multiprocessing.get_context("fork")
    else:
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(modules)
    return ProcessPoolExecutor(max_workers=workers, mp_context=context)


def _execute(jobs: Mapping[str, PartJob], on_results: Callable[[list[tuple[str, dict]]], None], workers: int,
             scheduler: str | None, executor: Executor | None) -> None:
    """Run the jobs, several parts per task, and hand each task's results to ``on_results([(key, payload),
    ...])`` as they arrive."""
    if not jobs:
        return
    if executor is None and scheduler is None and (workers <= 1 or len(jobs) == 1):
        for chunk in chunked(list(jobs), 1):
            on_results([(key, run_part(jobs[key])) for key in chunk])
        return
    own = executor is None
    if own and scheduler is not None:
        try:
            from distributed import Client
        except ImportError as exc:
            raise InputError("--scheduler needs the optional 'distributed' package: "
                             "pip install 'fitz_tool[cluster]'") from exc
        try:
            executor = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"--scheduler {scheduler}: cannot reach the Dask scheduler ({exc})") from exc
    elif own:
        executor = _process_pool(min(workers, len(jobs)))
    try:
        futures = {}
        for chunk in chunked(list(jobs), workers):
            batch = [jobs[key] for key in chunk]
            future = (executor.submit(run_parts, batch, pure=False) if _is_dask(executor)
                      else executor.submit(run_parts, batch))
            futures[future] = chunk
        for future in _as_completed(executor, list(futures)):
            chunk = futures[future]
            try:
                payloads = future.result()
            except Exception as exc:  # a worker died or the cluster failed: error rows, retried next run
                payloads = [{"status": "error", "retry": True, "elapsed_s": 0.0,
                             "error": f"{jobs[key].file}: the worker fitting it failed "
                                      f"({type(exc).__name__}: {exc}); run the lot again to retry"}
                            for key in chunk]
            on_results(list(zip(chunk, payloads, strict=True)))
    finally:
        if own:
            if _is_dask(executor):
                executor.close()
            else:
                executor.shutdown(wait=True, cancel_futures=True)


def _is_dask(executor) -> bool:
    return type(executor).__module__.split(".")[0] == "distributed"


def choose_models(items: Sequence[Mapping], payloads: Mapping[str, Mapping], auto: bool,
                  per_file: bool) -> tuple[dict[str, str], str | None, str]:
    """The model of each row: key -> expression, the lot's one model (or None) and how it was chosen.

    Rule for ``auto`` (one model for the lot): the BIC of each candidate is summed over the files that gave
    a result (a candidate not fitted to every one of them is left out); then the rule of
    :func:`fitz_tool.fit_auto` applied to the totals: among the candidates adequate on every file whose total
    BIC is within ``BIC_MARGIN`` of the best total, the one with the fewest free parameters; else the
    lowest total among those adequate everywhere; else the lowest total.
    """
    ok = {item["key"]: payloads[item["key"]] for item in items
          if item["key"] in payloads and payloads[item["key"]]["status"] == "ok"}
    if not auto or per_file:
        models = {key: payload["chosen"] for key, payload in ok.items()}
        chosen = sorted(set(models.values()))
        lot_model = chosen[0] if len(chosen) == 1 and not per_file else None
        note = "fixed by --model" if not auto else "each file's own automatic choice (--per-file-model)"
        return models, lot_model, note
    if not ok:
        return {}, None, "no file gave a result"
    common = set.intersection(*(set(p["candidates"]) for p in ok.values()))
    if not common:
        return {}, None, "no candidate model could be fitted to every file"
    totals = {expr: sum(_bic(p["candidates"][expr]) for p in ok.values()) for expr in common}
    adequate = [e for e in common if all(p["candidates"][e].get("adequate", True) for p in ok.values())]
    best = min(totals.values())
    close = [e for e in adequate if totals[e] <= best + BIC_MARGIN]
    n_free = {e: next(iter(ok.values()))["candidates"][e]["fit"]["n_free"] for e in common}
    if close:
        lot_model = min(close, key=lambda e: (n_free[e], totals[e]))
        note = (f"fewest free parameters among the models adequate on all {len(ok)} files within "
                f"{BIC_MARGIN:g} of the best total BIC")
    elif adequate:
        lot_model = min(adequate, key=lambda e: totals[e])
        note = "lowest total BIC among the models adequate on every file"
    else:
        lot_model = min(common, key=lambda e: totals[e])
        note = "lowest total BIC (no candidate is adequate on every file)"
    note += f" (total BIC {totals[lot_model]:.1f} over {len(ok)} files)"
    return {key: lot_model for key in ok}, lot_model, note


def _bic(record: Mapping) -> float:
    bic = record["fit"]["bic"]
    return math.inf if bic is None else float(bic)


def _check_spec_names(specs: Sequence[Spec], payloads: Mapping, models: Mapping, at: Mapping) -> None:
    """Refuse a spec naming a quantity no row's model has (a usage error, after the fits are stored)."""
    names: set[str] = set()
    for key, model in models.items():
        names |= known_names(payloads[key]["candidates"][model], at)
    for spec in specs:
        if models and spec.name not in names:
            params = sorted(n for n in names if "@" not in n and n != "SRF")
            raise InputError(f"--spec {spec.name}: not a parameter of the lot's model "
                             f"({', '.join(params)}) nor SRF or VALUE@FREQ; the fits are stored, so a rerun "
                             "with a corrected --spec fits nothing again")


def _settings_json(settings: LotSettings) -> dict:
    data = asdict(settings)
    data["specs"] = list(settings.specs)
    return data


def run_lot(items: Sequence[LotItem], settings: LotSettings, *, store: str | Path | None = None,
            refit: bool = False, workers: int | None = None, scheduler: str | None = None,
            executor: Executor | None = None, progress: bool = False) -> LotResult:
    """Fit every file of a lot and build its table.

    Parameters
    ----------
    items : sequence of LotItem
        The files (:func:`fitz_tool.lot.collect_files` or :func:`fitz_tool.lot.read_manifest`).
    settings : LotSettings
        Model, options, operating frequencies and specs.
    store : path, optional
        SQLite results store; stored results of unchanged files are reused unless ``refit``. None: no store.
    refit : bool
        Fit every file again (results in the store are replaced).
    workers : int, optional
        Worker processes (default: the core count); 1 fits in this process.
    scheduler : str, optional
        Address of a Dask scheduler (needs the ``distributed`` package).
    executor : Executor, optional
        An executor to use instead (a ``ProcessPoolExecutor`` or a ``distributed.Client``).
    progress : bool
        Show a progress bar on stderr (tqdm; the command line passes :func:`fitz_tool.progress.wanted`).

    Raises
    ------
    InputError
        Bad spec or option, or a spec naming a quantity the lot's model does not have.
    """
    specs = settings.parsed_specs()
    at = settings.frequencies()
    planned = _jobs(items, settings, at)
    item_records = [{k: v for k, v in info.items() if k != "options"} for info, _ in planned]
    db = ResultStore(store) if store is not None else None
    try:
        run_id = db.begin_run(__version__, _settings_json(settings), item_records) if db else None
        payloads: dict[str, dict] = {}
        if db is not None and not refit:
            payloads = db.get_many(info["key"] for info, _ in planned if info["storable"])
        reused = sum(1 for info, _ in planned if info["key"] in payloads)
        pending: dict[str, PartJob] = {}
        infos: dict[str, dict] = {}
        for info, job in planned:
            if info["key"] not in payloads:
                pending.setdefault(info["key"], job)
                infos.setdefault(info["key"], info)
        failures = 0

        def on_results(results: list[tuple[str, dict]]) -> None:
            nonlocal failures
            rows = []
            for key, payload in results:
                payloads[key] = payload
                info = infos[key]
                if db is not None and info["storable"] and not payload.get("retry"):
                    rows.append((key, info["file"], info["sha256"], settings.model, info["options"], payload))
                failures += payload["status"] != "ok"
            if db is not None:
                db.put_many(rows, run_id)
            bar.update(len(results))
            bar.set_postfix(failed=failures, refresh=False)

        with shown(progress), progress_bar("fitting", len(pending), "part", show=bool(pending),
                                             leave=True) as bar:
            _execute(pending, on_results, workers or default_workers(), scheduler, executor)
        models, lot_model, note = choose_models(item_records, payloads, settings.is_auto,
                                                settings.per_file_model)
        _check_spec_names(specs, payloads, models, at)
        table = lot_table(item_records, payloads, models, specs, at)
        if db is not None:
            db.finish_run(run_id)
    finally:
        if db is not None:
            db.close()
    return LotResult(table, item_records, payloads, models, lot_model, note, specs, at,
                     fitted=len(pending), reused=reused, run_id=run_id)


def table_from_store(store: str | Path, run_id: int | None = None,
                     specs: Sequence[str] | None = None) -> LotResult:
    """Rebuild a lot's table from the store (default: its latest run), without fitting anything.

    ``specs`` replaces the run's own spec limits when given. Parts the run did not finish are ``error`` rows.
    """
    with ResultStore(store, create=False) as db:
        run = db.run(run_id)
        stored = dict(run["settings"])
        stored["specs"] = tuple(specs) if specs else tuple(stored.get("specs", ()))
        settings = LotSettings(**stored)
        items = run["items"]
        payloads = db.get_many(item["key"] for item in items)
    spec_objects = settings.parsed_specs()
    at = settings.frequencies()
    models, lot_model, note = choose_models(items, payloads, settings.is_auto, settings.per_file_model)
    _check_spec_names(spec_objects, payloads, models, at)
    table = lot_table(items, payloads, models, spec_objects, at)
    return LotResult(table, items, payloads, models, lot_model, note, spec_objects, at, run_id=run["id"])
