"""Publishing a command's output folder in one step: the target is always all old or all new.

Every command writes its files into a staging folder beside the target and publishes it with
one rename::

    from lcoe.export.staging import publish

    with publish("outputs/site_a", force=args.force) as stage:
        result = run_case(...)                      # compute inside: the lock is held
        stage.write_text("summary.json", text)
        stage.write_with("workbook.xlsx", lambda path: write_workbook(result, path))

What :func:`publish` guarantees:

- **Lock.** ``.<name>.lcoe-lock`` beside the target is locked (``flock``) for the whole block; a
  second run into the same folder fails at once with one line. The kernel drops the lock when
  a process dies, even by SIGKILL.
- **Refusal before work.** A target that is not a folder, a non-empty folder without
  ``force`` (or ``replace_own`` for a folder lcoe wrote), or a folder holding files lcoe did
  not write is refused on entry, before any computation.
- **One rename.** The staging folder ``.<name>.lcoe-stage-XXXX`` is renamed onto the target.
  An existing target is swapped with it atomically (Linux ``renameat2(RENAME_EXCHANGE)``) and
  deleted afterwards; elsewhere it is renamed aside to ``.<name>.lcoe-old-XXXX`` first and
  deleted only after the new folder is in place. Ctrl-C is held back during the swap.
- **Nothing half-written.** Any exception in the block deletes the staging folder and leaves
  the target untouched. Folders left by a killed run are cleaned (an old folder moved aside is
  put back) the next time a run takes the lock.

Every published folder holds :data:`MARKER`, listing the files lcoe wrote; ``--force`` replaces
only such a folder, so a mistyped ``--out ~`` can never delete a user's files.
"""

from __future__ import annotations

import ctypes
import errno
import os
import secrets
import shutil
import signal
import sys
import tempfile
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path

from lcoe.case.errors import InputError

#: File left in every output folder: first line ``written by lcoe``, then the files written.
MARKER = ".lcoe-output"
_STAGE, _OLD, _LOCK = ".lcoe-stage-", ".lcoe-old-", ".lcoe-lock"


class Stage:
    """The staging folder of a :func:`publish` block; files written here appear together.

    Attributes
    ----------
    path : pathlib.Path
        The staging folder (beside the target, hidden).
    target : pathlib.Path
        The folder the stage is published to.
    """

    def __init__(self, path: Path, target: Path):
        self.path, self.target = path, target

    def file(self, name: str) -> Path:
        """Path in the staging folder to write ``name`` to (a plain file name)."""
        if not name or name != Path(name).name or name in (".", "..", MARKER):
            raise ValueError(f"output file name {name!r}: expected a plain file name")
        return self.path / name

    def write_text(self, name: str, text: str) -> None:
        self.file(name).write_text(text, encoding="utf-8")

    def write_bytes(self, name: str, data: bytes) -> None:
        self.file(name).write_bytes(data)

    def write_with(self, name: str, writer: Callable[[Path], None]) -> None:
        """Call ``writer(path)`` to produce ``name``."""
        writer(self.file(name))


@contextmanager
def publish(target: str | Path, force: bool = False, replace_own: bool = False,
            option: str = "--out") -> Iterator[Stage]:
    """Lock ``target``, stage its new content and publish it with one rename.

    Parameters
    ----------
    target : str or pathlib.Path
        Output folder (created with its parents; a symlink is followed).
    force : bool
        Replace a non-empty folder that lcoe wrote.
    replace_own : bool
        Replace it only when lcoe wrote it (``lcoe demo`` refreshing its own folder).
    option : str
        How the user named the folder, for messages (default ``--out``).

    Yields
    ------
    Stage
        Write every file through it; on a clean exit of the block the folder is published.

    Raises
    ------
    InputError
        Target refused or locked by another run (one line; nothing is written).
    """
    shown = f"{option} {target}"
    path = _real(target, shown)
    with _locked(path, shown):
        _recover(path)
        _recover_neighbours(path)
        _check_target(path, shown, force, replace_own)
        stage = Path(tempfile.mkdtemp(prefix=f".{path.name}{_STAGE}", dir=path.parent))
        try:
            yield Stage(stage, path)
            names = sorted(p.name for p in stage.iterdir())
            (stage / MARKER).write_text("written by lcoe\n" + "".join(f"{n}\n" for n in names),
                                        encoding="utf-8")
            with _interrupts_held():
                _swap_in(stage, path)
        except BaseException:
            shutil.rmtree(stage, ignore_errors=True)
            raise


@contextmanager
def staged(out, force: bool = False, replace_own: bool = False) -> Iterator[Stage]:
    """``out`` itself when it is a :class:`Stage` already, else ``publish(out, ...)``.

    Lets an exporter take either a folder (library use) or the stage of a command that holds
    the lock around its computation.
    """
    if isinstance(out, Stage):
        yield out
    else:
        with publish(out, force=force, replace_own=replace_own) as stage:
            yield stage


def publish_file(target: str | Path, data: bytes, force: bool = False) -> None:
    """Write one file atomically: a staged temporary file linked or renamed into place.

    Without ``force`` an existing file is refused (one line), also when it appears while
    writing; with ``force`` it is replaced in one rename.
    """
    shown = str(target)
    path = _real(target, shown)
    with _locked(path, shown):
        _recover(path)
        if path.is_dir():
            raise InputError(f"{shown}: is a folder; expected a file name")
        if os.path.lexists(path) and not force:
            raise InputError(f"{shown}: file exists; add --force to replace it")
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}{_STAGE}", dir=path.parent)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            if force:
                os.replace(tmp, path)
            else:
                try:
                    os.link(tmp, path)  # fails if the name was taken meanwhile: no clobbering
                except FileExistsError:
                    raise InputError(f"{shown}: file exists; add --force to replace it") \
                        from None
                os.unlink(tmp)
        except BaseException:
            if os.path.lexists(tmp):
                os.unlink(tmp)
            raise


# ---------------------------------------------------------------------------------------------
# Steps of publishing (each one small, so that tests can inject a failure at every step)
# ---------------------------------------------------------------------------------------------


def _real(target: str | Path, shown: str) -> Path:
    """Absolute target with symlinks resolved; its parent folder is created."""
    if "\0" in str(target):
        raise InputError(f"{shown}: contains a NUL character")
    path = Path(os.path.realpath(target))
    if path.parent == path or not path.name:
        raise InputError(f"{shown}: is the root of the file system; choose a folder inside it")
    path.parent.mkdir(parents=True, exist_ok=True)
    return path


def _try_lock(fd: int) -> bool:
    """Take an exclusive, non-blocking lock on an open file; False when another holds it."""
    try:
        import fcntl
    except ImportError:  # Windows
        import msvcrt

        try:
            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
        except OSError:
            return False
        return True
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        return False
    return True


@contextmanager
def _locked(path: Path, shown: str) -> Iterator[None]:
    """Hold ``.<name>.lcoe-lock`` beside ``path``; refuse at once when another run holds it."""
    lock = path.parent / f".{path.name}{_LOCK}"
    while True:
        fd = os.open(lock, os.O_RDWR | os.O_CREAT, 0o644)
        if not _try_lock(fd):
            holder = os.read(fd, 32).decode("ascii", "replace").strip()
            os.close(fd)
            who = f" (process {holder})" if holder.isdigit() else ""
            raise InputError(f"{shown}: another lcoe run{who} is writing this folder; wait for "
                             f"it to finish or choose another folder")
        try:  # the holder before us may have removed the file after we opened it
            if os.fstat(fd).st_ino == os.stat(lock).st_ino:
                break
        except FileNotFoundError:
            pass
        os.close(fd)
    try:
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode("ascii"))
        yield
    finally:
        try:
            os.unlink(lock)  # while still locked, so nobody can take a file about to vanish
        except OSError:
            pass
        os.close(fd)


def _siblings(path: Path, kind: str) -> list[Path]:
    prefix = f".{path.name}{kind}"
    with os.scandir(path.parent) as it:
        return sorted(Path(e.path) for e in it if e.name.startswith(prefix))


def _remove(p: Path) -> None:
    if p.is_dir() and not p.is_symlink():
        shutil.rmtree(p, ignore_errors=True)
    else:
        try:
            p.unlink()
        except OSError:
            pass


def _recover(path: Path) -> list[Path]:
    """Clean what killed runs left beside ``path`` (called with the lock held).

    A folder moved aside (``.lcoe-old-``) while the target is missing is put back: the run
    died between its two renames. Every other staging or moved-aside folder is deleted.

    Returns
    -------
    list of pathlib.Path
        What was removed.
    """
    old = _siblings(path, _OLD)
    if old and not os.path.lexists(path):
        os.rename(old.pop(), path)
    removed = old + _siblings(path, _STAGE)
    for p in removed:
        _remove(p)
    return removed


def _recover_neighbours(path: Path) -> None:
    """Clean what killed runs into other folders of the same parent left, unless a live run
    holds them (their lock is tried without waiting)."""
    names = set()
    with os.scandir(path.parent) as it:
        for e in it:
            for kind in (_STAGE, _OLD):
                if e.name.startswith(".") and kind in e.name:
                    names.add(e.name[1:e.name.index(kind)])
    for name in sorted(names - {path.name, ""}):
        try:
            with _locked(path.parent / name, name):
                _recover(path.parent / name)
        except InputError:  # a live run is writing it
            pass


def _check_target(path: Path, shown: str, force: bool, replace_own: bool) -> None:
    """Refuse a target that may not be replaced (see :func:`publish`)."""
    if os.path.lexists(path) and not path.is_dir():
        raise InputError(f"{shown}: exists and is not a folder")
    if not path.is_dir():
        return
    entries = sorted(p.name for p in path.iterdir())
    if not entries:
        return
    own = MARKER in entries
    if not (force or (replace_own and own)):
        raise InputError(f"{shown}: folder is not empty; choose another folder or add --force "
                         f"to replace it")
    written = _marker_files(path / MARKER) if own else None
    foreign = [] if written is None else [n for n in entries if n != MARKER and n not in written]
    if not own or foreign:
        what = ", ".join((foreign or entries)[:3]) + (", ..." if len(foreign or entries) > 3
                                                      else "")
        raise InputError(f"{shown}: holds files lcoe did not write ({what}); --force only "
                         f"replaces a folder written by lcoe; move them or choose another "
                         f"folder")
    cwd = Path.cwd().resolve()
    if cwd == path or path in cwd.parents:
        raise InputError(f"{shown}: is the current folder or holds it; run from elsewhere or "
                         f"choose another folder")


def _marker_files(marker: Path) -> set[str] | None:
    """Files listed in a marker; None for a marker of an older lcoe that listed none."""
    lines = marker.read_text(encoding="utf-8", errors="replace").splitlines()
    return set(lines[1:]) if len(lines) > 1 else None


def _swap_in(stage: Path, path: Path) -> None:
    """Publish ``stage`` at ``path``: one rename, or an atomic exchange with the old folder."""
    if not os.path.lexists(path):
        os.rename(stage, path)
        return
    if _exchange(stage, path):
        shutil.rmtree(stage, ignore_errors=True)  # now the old folder; cleaned next run if left
        return
    old = path.parent / f".{path.name}{_OLD}{os.getpid()}-{secrets.token_hex(4)}"
    os.rename(path, old)
    try:
        os.rename(stage, path)
    except BaseException:
        if not os.path.lexists(path):
            os.rename(old, path)
        raise
    shutil.rmtree(old, ignore_errors=True)


_AT_FDCWD, _RENAME_EXCHANGE = -100, 2


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux ``renameat2`` with ``RENAME_EXCHANGE``).

    Returns False where the system or the file system cannot (the caller then uses two
    renames).
    """
    if not sys.platform.startswith("linux"):
        return False
    try:
        fn = ctypes.CDLL(None, use_errno=True).renameat2
    except (AttributeError, OSError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    if fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.ENOTSUP):
        return False
    raise OSError(err, os.strerror(err), str(b))


@contextmanager
def _interrupts_held() -> Iterator[None]:
    """Hold back Ctrl-C (and SIGTERM) while the folder is swapped; deliver it afterwards."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []
    names = [signal.SIGINT] + ([signal.SIGTERM] if hasattr(signal, "SIGTERM") else [])
    before = {s: signal.signal(s, lambda n, f: caught.append(n)) for s in names}
    try:
        yield
    finally:
        for s, h in before.items():
            signal.signal(s, h)
        if caught:
            handler = before[caught[0]]
            if callable(handler):
                handler(caught[0], None)
            elif handler == signal.SIG_DFL:
                signal.raise_signal(caught[0])
