"""Which files make a lot: paths, folders and globs, or a manifest listing files with part ids and conditions.

A manifest is a CSV file with a header row. Columns (case-sensitive names):

- ``file`` (required): the bench file, relative to the manifest's folder unless absolute;
- ``part`` (optional): the part id (default: the file's stem);
- per-file reading options ``shunt``, ``reference``, ``through``, ``open``, ``short``, ``skew``, ``band``,
  ``noise`` (optional; an empty cell means "use the command-line value"); ``open`` and ``short`` are files
  relative to the manifest's folder;
- every other column is a condition (``bias_A``, ``temperature_C``, ``vendor``...) copied to the table.
"""

from __future__ import annotations

import csv
import glob
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from ..exceptions import InputError

__all__ = ["LotItem", "collect_files", "read_manifest", "MANIFEST_OPTIONS", "BENCH_SUFFIXES"]

#: Manifest columns that are per-file reading options rather than conditions.
MANIFEST_OPTIONS = ("shunt", "reference", "through", "open", "short", "skew", "band", "noise")
#: File suffixes taken from a folder (files given by name or glob are taken whatever their suffix).
BENCH_SUFFIXES = (".csv", ".txt", ".tsv", ".dat", ".s1p", ".s2p")
_PATH_OPTIONS = ("open", "short")


@dataclass(frozen=True)
class LotItem:
    """One file of a lot: its path, part id, conditions (text, as written) and per-file reading options."""

    file: str
    part: str
    conditions: dict[str, str] = field(default_factory=dict)
    options: dict[str, str] = field(default_factory=dict)


def collect_files(paths: Sequence[str]) -> list[LotItem]:
    """Expand files, folders (their bench files, sorted, not recursive) and globs into lot items.

    Raises
    ------
    InputError
        A path that names nothing, or a glob or folder with no bench file in it.
    """
    found: list[str] = []
    for text in paths:
        path = Path(text)
        if path.is_dir():
            files = sorted(str(p) for p in path.iterdir()
                           if p.is_file() and p.suffix.lower() in BENCH_SUFFIXES)
            if not files:
                raise InputError(f"{text}: folder holds no bench file ({', '.join(BENCH_SUFFIXES)})")
            found += files
        elif path.exists():
            found.append(text)
        elif glob.has_magic(text):
            files = sorted(p for p in glob.glob(text) if Path(p).is_file())
            if not files:
                raise InputError(f"{text}: the pattern matches no file")
            found += files
        else:
            raise InputError(f"{text}: no such file or folder")
    unique = list(dict.fromkeys(found))
    if not unique:
        raise InputError("lot: give bench files, folders or globs, or --manifest FILE.csv")
    return [LotItem(file=f, part=Path(f).stem) for f in unique]


def read_manifest(path: str | Path) -> list[LotItem]:
    """Read a manifest CSV (columns in the module docstring) into lot items.

    Raises
    ------
    InputError
        The manifest cannot be read, has no ``file`` column, a row without a file, or a repeated file.
    """
    path = Path(path)
    try:
        with open(path, newline="", encoding="utf-8-sig") as handle:
            rows = list(csv.DictReader(handle))
            header = list(rows[0].keys()) if rows else []
    except OSError as exc:
        raise InputError(f"{path}: cannot read the manifest ({exc.strerror})") from exc
    except (UnicodeDecodeError, csv.Error) as exc:
        raise InputError(f"{path}: not a UTF-8 CSV manifest ({exc})") from exc
    if not rows:
        raise InputError(f"{path}: the manifest lists no file (expected a header row with 'file' and rows)")
    if "file" not in header:
        raise InputError(f"{path}: the manifest has no 'file' column (header: {', '.join(map(str, header))})")
    base = path.parent
    items: list[LotItem] = []
    seen: set[str] = set()
    for number, row in enumerate(rows, start=2):
        if None in row:
            raise InputError(f"{path}, row {number}: more cells than header columns")
        cells = {k.strip(): (v or "").strip() for k, v in row.items()}
        if not cells["file"]:
            raise InputError(f"{path}, row {number}: column 'file' is empty")
        file = _relative_to(base, cells["file"])
        if file in seen:
            raise InputError(f"{path}, row {number}: {cells['file']} is listed twice")
        seen.add(file)
        options = {k: (_relative_to(base, v) if k in _PATH_OPTIONS else v)
                   for k, v in cells.items() if k in MANIFEST_OPTIONS and v}
        conditions = {k: v for k, v in cells.items() if k not in ("file", "part", *MANIFEST_OPTIONS)}
        items.append(LotItem(file=file, part=cells.get("part") or Path(file).stem,
                             conditions=conditions, options=options))
    return items


def _relative_to(base: Path, text: str) -> str:
    path = Path(text)
    return str(path if path.is_absolute() else base / path)
