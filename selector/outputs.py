"""Writing files: whole or not at all, all of a command's outputs or none, never over an input.

The one place where dropper writes a file (BOM, HTML report, snapped CSV, caches):

* :func:`check_outputs` refuses, before anything is computed or written, an output whose folder
  does not exist, an output that is a folder, and an output that is one of the command's inputs
  or another of its outputs (same path after resolving links, or the same file);
* :class:`Outputs` stages each file in a temporary file beside its target (hidden name
  ``.<name>.<random>.tmp``) and renames them all at the end (``os.replace``, atomic within a
  folder): on an exception nothing is renamed and every temporary file is removed;
* the renames are all or nothing as far as the OS allows: before a target that exists is
  replaced, its old file is kept under a hidden second name in the same folder (a hard link,
  ``.<name>.<random>.old``; a copy where the file system has no hard links). When a later
  rename fails, every target already replaced gets its old file back (renamed over it) and
  every target that did not exist before is removed; the error names the file that could not
  be written (:class:`~selector.errors.OutputWriteError`, exit 2). The old names are removed
  on success and on failure. Source: POSIX.1-2017 (IEEE Std 1003.1-2017), rename(): "If the
  link named by the new argument exists, it shall be removed and old renamed to new", and a
  link named new stays visible throughout, referring to the old file or the new one (atomic
  replacement within one file system); link(): a second name for the same file. Limits: a
  crash or SIGKILL between two renames leaves the first replaced (and its ``.old`` name); a
  SIGTERM there removes the ``.old`` names with the temporary files; a restore that fails in
  turn is named in the error, with the hidden file that keeps the old content;
* temporary files are also removed when the process gets SIGTERM or SIGHUP while they exist
  (the signal is then delivered as before, so the exit status still says "terminated");
* a new file gets the mode any program of the user would give it (0666 less the umask), not
  ``mkstemp``'s 0600; caches ask for ``private=True`` (owner only).

:func:`write_atomic` writes one file this way.
"""

from __future__ import annotations

import os
import re
import secrets
import shutil
import signal
import stat
import tempfile
import threading
from collections.abc import Iterable
from pathlib import Path
from types import TracebackType
from typing import Any

from .errors import BadValueError, OutputWriteError

__all__ = ["FORMULA_START", "Outputs", "check_outputs", "spreadsheet_cell", "write_atomic"]

#: first characters that make a spreadsheet read a CSV cell as a formula (OWASP "CSV injection":
#: = + - @, and tab / carriage return, which some programs skip before looking)
FORMULA_START: tuple[str, ...] = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")

# temporary files that exist now, removed by the signal handler
_PENDING: set[str] = set()
_LOCK = threading.Lock()
_SIGNALS = tuple(
    s for s in (getattr(signal, "SIGTERM", None), getattr(signal, "SIGHUP", None)) if s
)
_PREVIOUS: dict[int, Any] = {}


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.resolve() == b.resolve():
            return True
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_outputs(
    outputs: Iterable[tuple[str, Path | str | None]],
    inputs: Iterable[tuple[str, Path | str | None]] = (),
) -> None:
    """Refuse bad output paths before any work: ``outputs`` and ``inputs`` are (name, path)
    pairs, the name being the option or argument that gave the path (``--report``, ``BOM``);
    None paths are skipped. Raises BadValueError (exit 2) naming both sides."""
    outs = [(name, Path(p)) for name, p in outputs if p is not None]
    ins = [(name, Path(p)) for name, p in inputs if p is not None]
    for i, (name, path) in enumerate(outs):
        if path.is_dir():
            raise BadValueError(f"{name} {path}: is a folder; give a file name")
        folder = path.parent
        if not folder.is_dir():
            raise BadValueError(f"{name} {path}: the folder {folder} does not exist")
        for in_name, in_path in ins:
            if _same_file(path, in_path):
                raise BadValueError(
                    f"{name} {path} is the input {in_name}; refusing to overwrite it "
                    "(give another file name)"
                )
        for other_name, other in outs[:i]:
            if _same_file(path, other):
                raise BadValueError(f"{name} {path} is also {other_name}; give two file names")


def spreadsheet_cell(text: Any) -> str:
    """A CSV cell that a spreadsheet will not run as a formula: text starting with one of
    :data:`FORMULA_START` gets a leading apostrophe, except a plain number (``-5``, ``+3.3``,
    ``-1e-3``), which no spreadsheet runs and which must stay a number. Used for every CSV
    dropper writes (BOM, snapped files).

    >>> [spreadsheet_cell(c) for c in ["=1+1", "@SUM(A1)", "-2+3", "-5", "4k7", None]]
    ["'=1+1", "'@SUM(A1)", "'-2+3", '-5', '4k7', '']
    """
    s = "" if text is None else str(text)
    if s.startswith(FORMULA_START) and not _PLAIN_NUMBER.fullmatch(s):
        return "'" + s
    return s


def _user_mode() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _on_signal(signum: int, frame: Any) -> None:
    _remove_pending()
    previous = _PREVIOUS.get(signum, signal.SIG_DFL)
    if callable(previous):
        previous(signum, frame)
        return
    if previous == signal.SIG_IGN:
        return
    signal.signal(signum, signal.SIG_DFL)
    os.kill(os.getpid(), signum)


def _remove_pending() -> None:
    for tmp in list(_PENDING):
        try:
            os.unlink(tmp)
        except OSError:
            pass
        _PENDING.discard(tmp)


def _register(tmp: str) -> None:
    with _LOCK:
        if not _PENDING and threading.current_thread() is threading.main_thread():
            for signum in _SIGNALS:
                try:
                    _PREVIOUS[signum] = signal.signal(signum, _on_signal)
                except (ValueError, OSError):  # not the main thread or not allowed here
                    pass
        _PENDING.add(tmp)


def _unregister(tmp: str) -> None:
    with _LOCK:
        _PENDING.discard(tmp)
        if not _PENDING and threading.current_thread() is threading.main_thread():
            for signum, previous in list(_PREVIOUS.items()):
                try:
                    if signal.getsignal(signum) is _on_signal:
                        signal.signal(signum, previous)
                except (ValueError, OSError):
                    pass
                del _PREVIOUS[signum]


class Outputs:
    """The outputs of one command, renamed into place together.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with Outputs() as out:
    ...     _ = out.write(folder / "a.txt", "one")
    ...     _ = out.write(folder / "b.txt", "two")
    >>> sorted(p.name for p in folder.iterdir())
    ['a.txt', 'b.txt']
    """

    def __init__(self) -> None:
        self._staged: list[tuple[str, Path]] = []

    def write(
        self,
        path: Path | str,
        data: str | bytes,
        *,
        encoding: str = "utf-8",
        newline: str | None = None,
        private: bool = False,
    ) -> Path:
        """Stage ``data`` for ``path`` (text with ``encoding`` and ``newline`` as for
        :func:`open`, or bytes); the file appears at :meth:`commit`. Raises OSError."""
        target = Path(path)
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
        _register(tmp)
        try:
            if not private:
                os.fchmod(fd, _user_mode())
            if isinstance(data, bytes):
                with os.fdopen(fd, "wb") as fh:
                    fh.write(data)
            else:
                with os.fdopen(fd, "w", encoding=encoding, newline=newline) as fh:
                    fh.write(data)
        except BaseException:
            self._drop(tmp)
            raise
        self._staged.append((tmp, target))
        return target

    def _drop(self, tmp: str) -> None:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        _unregister(tmp)

    def commit(self) -> None:
        """Rename every staged file over its target (in the order staged), all or nothing
        (see the module doc). Raises :class:`~selector.errors.OutputWriteError` naming the
        target that could not be written, after putting back the ones already renamed."""
        done: list[tuple[Path, str | None]] = []  # target, its old file's hidden name (or None)
        try:
            while self._staged:
                tmp, target = self._staged[0]
                try:
                    kept = _keep_old(target)
                except OSError as exc:
                    raise self._undo(done, target, exc) from None
                try:
                    os.replace(tmp, target)
                except OSError as exc:
                    if kept is not None:
                        _drop_kept(kept)
                    raise self._undo(done, target, exc) from None
                done.append((target, kept))
                self._staged.pop(0)
                _unregister(tmp)
            for _, kept in done:
                if kept is not None:
                    _drop_kept(kept)
        finally:
            self.discard()

    @staticmethod
    def _undo(done: list[tuple[Path, str | None]], failed: Path, exc: OSError) -> OutputWriteError:
        """Put back the targets in ``done`` (old file renamed over it, or the new file removed)
        and return the error to raise for ``failed``."""
        unrestored = []
        for target, kept in reversed(done):
            try:
                if kept is None:
                    os.unlink(target)
                else:
                    os.replace(kept, target)
                    _unregister(kept)
            except OSError as undo_exc:
                if kept is not None:
                    _unregister(kept)  # left on disk: the message says where
                where = f" (its old content is in {kept})" if kept else ""
                unrestored.append(f"{target}: {undo_exc.strerror or undo_exc}{where}")
        reason = exc.strerror or str(exc)
        message = f"cannot write {failed}: {reason}"
        if unrestored:
            message += "; could not put back " + "; ".join(unrestored)
        elif done:
            message += "; the other outputs were put back as they were"
        else:
            message += "; nothing was written"
        return OutputWriteError(message, exc.errno)

    def discard(self) -> None:
        """Remove every staged file that was not renamed."""
        while self._staged:
            tmp, _ = self._staged.pop()
            self._drop(tmp)

    def __enter__(self) -> Outputs:
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        if exc_type is None:
            self.commit()
        else:
            self.discard()


def _keep_old(target: Path) -> str | None:
    """A hidden second name in ``target``'s folder for the file that ``target`` names now (a
    hard link, or a copy where links are not possible), or None when nothing is there (or a
    folder, which the rename will refuse). Registered like a temporary file."""
    try:
        mode = os.lstat(target).st_mode
    except FileNotFoundError:
        return None
    if stat.S_ISDIR(mode):
        return None
    while True:
        kept = str(target.with_name(f".{target.name}.{secrets.token_hex(4)}.old"))
        if os.path.lexists(kept):
            continue
        _register(kept)
        try:
            try:
                os.link(target, kept, follow_symlinks=False)
            except FileExistsError:
                raise
            except OSError:  # no hard links here (some file systems): a copy keeps the bytes
                if stat.S_ISLNK(mode):
                    os.symlink(os.readlink(target), kept)
                else:
                    with open(kept, "xb"):
                        pass
                    shutil.copy2(target, kept)
            return kept
        except FileExistsError:
            _unregister(kept)
        except BaseException:
            _drop_kept(kept)
            raise


def _drop_kept(kept: str) -> None:
    try:
        os.unlink(kept)
    except OSError:
        pass
    _unregister(kept)


def write_atomic(
    path: Path | str,
    data: str | bytes,
    *,
    encoding: str = "utf-8",
    newline: str | None = None,
    private: bool = False,
    make_folder: bool = False,
) -> Path:
    """Write one file through a temporary file and ``os.replace``: a reader sees the old file
    or the whole new one, never half of it. ``private``: owner-only mode (caches); otherwise
    the user's umask. ``make_folder``: create missing parent folders. Raises OSError."""
    target = Path(path)
    if make_folder:
        target.parent.mkdir(parents=True, exist_ok=True)
    with Outputs() as out:
        out.write(target, data, encoding=encoding, newline=newline, private=private)
    return target
