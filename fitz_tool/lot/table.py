"""The lot table: one row per file with its conditions, status, values (SI) with standard errors, verdicts.

Columns, in order: ``file``, ``part``, the condition columns, ``status`` (``ok``/``error``), ``error`` (one
line), ``model``, every parameter ``NAME`` and ``NAME_stderr``, ``SRF`` and ``SRF_stderr`` (the lowest
self-resonance inside the sweep; empty when there is none), design values ``VALUE@FREQ`` and their
``_stderr`` for each operating frequency, ``spec_NAME`` verdicts, and ``verdict`` (``pass``, ``fail``,
``marginal``, ``error``, or empty when no spec was given).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from pathlib import Path

import pandas as pd

from ..exceptions import InputError, OutputError
from .spec import DESIGN_NAMES, Spec, combine_verdicts, split_design_name, verdict

__all__ = ["quantity", "lot_table", "write_table", "known_names"]


def _nan(value) -> float:
    return math.nan if value is None else float(value)


def quantity(record: Mapping, name: str, at: Mapping[str, float]) -> tuple[float, float]:
    """(value, standard error) in SI of a parameter, ``SRF`` or ``VALUE@LABEL`` in a fit record; NaN when
    the record does not have it (standard error NaN when the fit gave none)."""
    if name in record["parameters"]:
        p = record["parameters"][name]
        return _nan(p["value"]), _nan(p["stderr"])
    derived = record["derived"]
    if name == "SRF":
        inside = [r["frequency"] for r in derived["resonances"] if r["in_sweep"] and r["frequency"]["value"]]
        if not inside:
            return math.nan, math.nan
        low = min(inside, key=lambda v: v["value"])
        return _nan(low["value"]), _nan(low["stderr"])
    design = split_design_name(name)
    if design is None or design[1] not in at:
        return math.nan, math.nan
    value_name, label = design
    for point in derived["at"]:
        if point["frequency"] is not None and math.isclose(point["frequency"], at[label], rel_tol=1e-9):
            v = point["values"].get(value_name)
            return (math.nan, math.nan) if v is None else (_nan(v["value"]), _nan(v["stderr"]))
    return math.nan, math.nan


def known_names(record: Mapping, at: Mapping[str, float]) -> set[str]:
    """Every quantity name a fit record can give (parameters, SRF, and each design value at each label)."""
    return {*record["parameters"], "SRF", *(f"{v}@{label}" for label in at for v in DESIGN_NAMES)}


def lot_table(items: Sequence[Mapping], payloads: Mapping[str, Mapping], models: Mapping[str, str],
              specs: Sequence[Spec], at: Mapping[str, float]) -> pd.DataFrame:
    """Build the table.

    Parameters
    ----------
    items : sequence of mapping
        The lot's files in order: ``file``, ``part``, ``conditions`` (dict) and ``key``.
    payloads : mapping
        Key -> the job's result record (see :func:`fitz_tool.lot.job.run_part`); a missing key gives an
        ``error`` row ("no result").
    models : mapping
        Key -> the candidate expression whose fit goes into the row.
    specs : sequence of Spec
        Limits to judge.
    at : mapping
        Frequency label (as written, e.g. ``"100k"``) -> frequency in Hz.
    """
    conditions = list(dict.fromkeys(c for item in items for c in item["conditions"]))
    rows: list[dict] = []
    parameters: dict[str, None] = {}
    design: dict[str, None] = {"SRF": None}
    for item in items:
        row: dict = {"file": item["file"], "part": item["part"]}
        row.update({c: item["conditions"].get(c, "") for c in conditions})
        payload = payloads.get(item["key"])
        record = None
        if payload is None:
            row.update(status="error", error=f"{item['file']}: no result (the run stopped before this part)")
        elif payload["status"] != "ok":
            row.update(status="error", error=payload["error"])
        else:
            model = models[item["key"]]
            record = payload["candidates"].get(model)
            if record is None:
                row.update(status="error", error=f"{item['file']}: the lot's model {model!r} could not be "
                                                 "fitted to this file")
        if record is None:
            row["model"] = ""
            rows.append(row)
            continue
        row.update(status="ok", error="", model=record["model"])
        values: dict[str, tuple[float, float]] = {}
        for name in record["parameters"]:
            parameters[name] = None
            values[name] = quantity(record, name, at)
        names = ["SRF", *(f"{v}@{label}" for label in at for v in DESIGN_NAMES)]
        for name in names:
            value = quantity(record, name, at)
            if not math.isnan(value[0]):
                design[name] = None
                values[name] = value
        for spec in specs:
            values.setdefault(spec.name, quantity(record, spec.name, at))
        row["_values"] = values
        rows.append(row)
    spec_names = {s.name for s in specs}
    columns = ["file", "part", *conditions, "status", "error", "model"]
    for name in [*parameters, *design, *(s for s in spec_names if s not in parameters and s not in design)]:
        columns += [name, f"{name}_stderr"]
    columns += [s.column for s in specs] + ["verdict"]
    out = []
    for row in rows:
        values = row.pop("_values", {})
        flat = {c: row.get(c, "") for c in ("file", "part", *conditions, "status", "error", "model")}
        for name, (value, stderr) in values.items():
            flat[name], flat[f"{name}_stderr"] = value, stderr
        if row["status"] != "ok":
            flat["verdict"] = "error"
            flat.update({s.column: "" for s in specs})
        elif specs:
            judged = [verdict(s, *values.get(s.name, (math.nan, math.nan))) for s in specs]
            flat.update({s.column: v for s, v in zip(specs, judged, strict=True)})
            flat["verdict"] = combine_verdicts(judged)
        else:
            flat["verdict"] = ""
        out.append(flat)
    table = pd.DataFrame(out, columns=columns)
    return table


def write_table(table: pd.DataFrame, path: str | Path) -> bytes:
    """The table as bytes for ``path``: CSV, or Parquet for a ``.parquet`` suffix (needs pyarrow).

    Raises
    ------
    OutputError
        Parquet asked for without pyarrow installed.
    """
    if Path(path).suffix.lower() == ".parquet":
        try:
            import pyarrow  # noqa: F401
        except ImportError as exc:
            raise OutputError(f"{path}: writing Parquet needs pyarrow (pip install pyarrow); "
                              "or give a .csv table") from exc
        import io

        buffer = io.BytesIO()
        table.to_parquet(buffer, index=False)
        return buffer.getvalue()
    if Path(path).suffix.lower() not in (".csv", ".txt", ""):
        raise InputError(f"--table {path}: give a .csv (or .parquet) file")
    return table.to_csv(index=False, float_format="%.10g").encode("utf-8")
