"""Writing results safely: all outputs staged to temporary files, then renamed; never over an input."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable, Mapping
from pathlib import Path

from ..exceptions import OutputError

__all__ = ["write_outputs"]


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_outputs(
    contents: Mapping[str | Path, str | bytes], inputs: Iterable[str | Path] = ()
) -> list[Path]:
    """Write every ``path -> text or bytes`` or nothing.

    Parent folders are created. Each file is first written to a temporary file beside its target; only when
    all have been written are they renamed into place (rename is atomic on one file system). A target that
    is one of ``inputs`` raises OutputError before anything is written.
    """
    protected = {Path(p).resolve() for p in inputs}
    targets = [(Path(p), data) for p, data in contents.items()]
    for path, _ in targets:
        if path.resolve() in protected:
            raise OutputError(f"{path}: refusing to overwrite an input file; choose another output name")
    staged: list[tuple[str, Path]] = []
    try:
        for path, data in targets:
            path.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
            staged.append((tmp, path))
            with os.fdopen(fd, "wb") as handle:
                handle.write(data.encode("utf-8") if isinstance(data, str) else data)
            os.chmod(tmp, 0o666 & ~_umask())
        for tmp, path in staged:
            os.replace(tmp, path)
    except OSError as exc:
        for tmp, _ in staged:
            if os.path.exists(tmp):
                os.unlink(tmp)
        raise OutputError(f"{exc.filename or 'output'}: cannot write ({exc.strerror})") from exc
    return [path for path, _ in targets]
