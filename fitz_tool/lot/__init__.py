"""Many parts at once: a lot of bench files fitted alike, judged against spec limits, kept in a store.

``inputs`` (files, folders, globs, manifest) -> ``job`` (one part, in a worker) -> ``runner`` (process pool
or Dask, the store, one model for the lot) -> ``table`` (one row per file) -> ``stats`` (yield, Cp/Cpk);
``spec`` holds the limits and the guard-banded verdict rule, ``store`` the SQLite results store.
"""

from .inputs import LotItem, collect_files, read_manifest
from .job import PartJob, run_part
from .runner import LotResult, LotSettings, choose_models, default_workers, run_lot, table_from_store
from .spec import Spec, combine_verdicts, parse_spec, verdict
from .stats import LotStats, lot_statistics
from .store import ResultStore
from .table import lot_table, write_table

__all__ = ["LotItem", "collect_files", "read_manifest", "PartJob", "run_part", "LotResult", "LotSettings",
           "choose_models", "default_workers", "run_lot", "table_from_store", "Spec", "parse_spec",
           "verdict", "combine_verdicts", "LotStats", "lot_statistics", "ResultStore", "lot_table",
           "write_table"]
