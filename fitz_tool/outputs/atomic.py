"""Writing results safely: every output or none, never over an input, messages in the user's own paths.

Three phases:

1. **Check** every target before anything is written (``check_targets``): not an input file (any spelling,
   symlink or hard link of it), not twice in the set, not an existing directory, inside a folder that exists
   or can be created and is writable.
2. **Stage** each file's bytes in a temporary file beside its target. On Linux the temporary file is unnamed
   (``O_TMPFILE``), so even a kill by SIGKILL during this phase leaves nothing behind; elsewhere it is a
   hidden ``.NAME.*.part`` file removed in a ``finally``. SIGINT and SIGTERM are turned into exceptions while
   writing, so the ``finally`` runs for them too.
3. **Commit**: only when every file is staged are they renamed into place (``os.replace``, atomic on one file
   system). Should a rename fail half way, the outputs already replaced are restored from hard-link backups,
   so an older output is replaced only when the whole set succeeds.

Folders created for the outputs are removed again when nothing could be written.
"""

from __future__ import annotations

import errno
import os
import signal
import stat
import tempfile
import threading
from collections.abc import Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from ..exceptions import OutputError

__all__ = ["write_outputs", "check_targets", "Terminated"]


class Terminated(SystemExit):
    """Raised (from a SIGTERM handler) while outputs are written; exit status 143 = 128 + SIGTERM."""

    def __init__(self) -> None:
        super().__init__(128 + signal.SIGTERM)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def _first_existing(folder: Path) -> Path:
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    return folder


def check_targets(targets: Iterable[str | Path], inputs: Iterable[str | Path] = ()) -> list[Path]:
    """Refuse, before any work is written, a set of output paths that cannot all be written.

    Parameters
    ----------
    targets : iterable of str or Path
        Output files as the user named them.
    inputs : iterable of str or Path
        Files read for this run; no output may be one of them.

    Returns
    -------
    list of Path
        The targets as Paths, in order.

    Raises
    ------
    OutputError
        Naming the user's path and what to do: an input, a path given twice, an existing directory, a parent
        that is a file, or a folder without write permission.
    """
    inputs = [Path(p) for p in inputs]
    protected = {p.resolve() for p in inputs}
    paths = [Path(p) for p in targets]
    seen: dict[Path, Path] = {}
    for path in paths:
        if str(path).strip() == "" or path.name in ("", ".", ".."):
            raise OutputError(f"{str(path)!r}: not a file name; give an output file such as result.json")
        resolved = path.resolve()
        if resolved in protected or any(_same_file(path, p) for p in inputs):
            raise OutputError(f"{path}: refusing to overwrite an input file; choose another output name")
        if resolved in seen:
            other = "" if str(seen[resolved]) == str(path) else f" (also as {seen[resolved]})"
            raise OutputError(f"{path}: given for two outputs{other}; each output needs its own file name")
        seen[resolved] = path
        if path.is_dir():
            raise OutputError(f"{path}: is a directory; give a file name inside it, e.g. {path / 'out'}")
        if path.exists() and not stat.S_ISREG(path.stat().st_mode):
            raise OutputError(f"{path}: exists and is not a regular file; choose another output name")
        folder = _first_existing(path.parent)
        if not folder.is_dir():
            raise OutputError(f"{path}: {folder} is a file, not a folder; choose another output path")
        if not os.access(folder, os.W_OK | os.X_OK):
            raise OutputError(f"{path}: no permission to write in {folder}; choose another folder")
    return paths


@contextmanager
def _signals_as_exceptions() -> Iterator[None]:
    """While writing, SIGINT raises KeyboardInterrupt and SIGTERM raises ``Terminated`` (main thread only)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def on_term(signum, frame):  # noqa: ARG001 (signal handler signature)
        raise Terminated()

    previous = {signal.SIGINT: signal.signal(signal.SIGINT, signal.default_int_handler),
                signal.SIGTERM: signal.signal(signal.SIGTERM, on_term)}
    try:
        yield
    finally:
        for signum, handler in previous.items():
            signal.signal(signum, handler)


@dataclass
class _Staged:
    """One staged output: its target, the open unnamed file (fd) or the named temporary path."""

    target: Path
    fd: int | None = None
    temporary: str | None = None
    backup: str | None = None
    committed: bool = False
    created: list[Path] = field(default_factory=list)


def _make_parents(path: Path) -> list[Path]:
    created = []
    folder = path.parent
    missing = []
    while not folder.exists():
        missing.append(folder)
        folder = folder.parent
    for folder in reversed(missing):
        folder.mkdir()
        created.append(folder)
    return created


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        written = os.write(fd, view)
        view = view[written:]


def _stage(item: _Staged, data: bytes) -> None:
    mode = 0o666 & ~_umask()
    folder = item.target.parent
    try:
        item.fd = os.open(folder, os.O_TMPFILE | os.O_WRONLY, mode)
    except (AttributeError, OSError):  # no O_TMPFILE on this platform or file system
        item.fd = None
    if item.fd is None:
        fd, item.temporary = tempfile.mkstemp(prefix=f".{item.target.name}.", suffix=".part", dir=folder)
        os.fchmod(fd, mode)
        try:
            _write_all(fd, data)
        finally:
            os.close(fd)
        return
    _write_all(item.fd, data)


def _named(item: _Staged) -> str:
    """Give an unnamed staged file a hidden name beside its target (needed to rename it into place)."""
    if item.temporary is None:
        folder = os.open(item.target.parent, os.O_RDONLY | os.O_DIRECTORY)
        try:
            for _ in range(100):
                name = f".{item.target.name}.{os.urandom(4).hex()}.part"
                try:  # linkat with AT_SYMLINK_FOLLOW (a dir fd makes Python call linkat, not link)
                    os.link(f"/proc/self/fd/{item.fd}", name, dst_dir_fd=folder, follow_symlinks=True)
                except FileExistsError:
                    continue
                except OSError as exc:
                    raise OSError(exc.errno, exc.strerror, str(item.target)) from None
                item.temporary = str(item.target.parent / name)
                break
            else:  # pragma: no cover - 100 collisions of 32 random bits
                raise OSError(errno.EEXIST, "no free temporary name", str(item.target))
        finally:
            os.close(folder)
    return item.temporary


def _commit(staged: list[_Staged]) -> None:
    for item in staged:
        _named(item)
    for item in staged:
        if item.target.exists():
            backup = f"{item.temporary}.old"
            try:
                os.link(item.target, backup)
            except OSError:  # no hard links here: the older output cannot be restored after a failure
                continue
            item.backup = backup
    try:
        for item in staged:
            item.committed = True  # before the rename: a signal may arrive just after it
            os.replace(item.temporary, item.target)
            item.temporary = None
    except BaseException:
        _restore(staged)
        raise


def _restore(staged: list[_Staged]) -> None:
    """Put back the older outputs of a commit that failed half way (signals held off meanwhile)."""
    held = {signal.SIGINT, signal.SIGTERM}
    in_main = threading.current_thread() is threading.main_thread()
    if in_main:
        signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        for item in staged:
            if not item.committed or item.temporary is not None and os.path.exists(item.temporary):
                continue  # never renamed: the target still holds the older output (or nothing)
            if item.backup:
                os.replace(item.backup, item.target)
                item.backup = None
            else:
                try:
                    os.unlink(item.target)
                except FileNotFoundError:
                    pass
    finally:
        if in_main:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, held)


def _clean(staged: list[_Staged], success: bool) -> None:
    for item in staged:
        if item.fd is not None:
            os.close(item.fd)
            item.fd = None
        for leftover in (item.temporary, item.backup):
            if leftover:
                try:
                    os.unlink(leftover)
                except FileNotFoundError:
                    pass
    if not success:
        for item in reversed(staged):
            for folder in reversed(item.created):
                try:
                    folder.rmdir()
                except OSError:
                    pass


def _user_message(exc: OSError, staged: list[_Staged], current: Path | None) -> str:
    """The failing path as the user named it (never a temporary file)."""
    target = current
    name = str(exc.filename or "")
    for item in staged:
        if name and (name == item.temporary or name == item.backup or Path(name) == item.target):
            target = item.target
    reason = exc.strerror or type(exc).__name__
    return f"{target if target is not None else 'output'}: cannot write ({reason}); nothing was written"


def write_outputs(
    contents: Mapping[str | Path, str | bytes], inputs: Iterable[str | Path] = ()
) -> list[Path]:
    """Write every ``path -> text or bytes`` or nothing (see the module docstring for the three phases).

    Parameters
    ----------
    contents : mapping of str or Path to str or bytes
        Target path -> content (text is written as UTF-8).
    inputs : iterable of str or Path
        Files read for this run; none of them is ever overwritten.

    Returns
    -------
    list of Path
        The written files, in the order given.

    Raises
    ------
    OutputError
        A target that fails the checks, or a write that failed (the user's path named); nothing written.
    KeyboardInterrupt, Terminated
        On SIGINT / SIGTERM during the writes; staged files removed, older outputs untouched.
    """
    paths = check_targets(contents, inputs)
    blobs = [data.encode("utf-8") if isinstance(data, str) else bytes(data) for data in contents.values()]
    staged: list[_Staged] = []
    current: Path | None = None
    success = False
    try:
        with _signals_as_exceptions():
            for path, data in zip(paths, blobs, strict=True):
                current = path
                item = _Staged(path)
                staged.append(item)
                item.created = _make_parents(path)
                _stage(item, data)
            current = None
            _commit(staged)
            success = True
    except OSError as exc:
        raise OutputError(_user_message(exc, staged, current)) from None
    finally:
        _clean(staged, success)
    return paths
