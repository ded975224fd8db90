"""Atomic file output: every file gaitload writes goes through a temporary file in the same
folder and is renamed into place, so an interrupted run never leaves a half-written file.
(HDF5 records do the same in :mod:`sim.record`, with :func:`create_temp`.)

Temporary files are created exclusively (``O_CREAT | O_EXCL`` through :func:`tempfile.mkstemp`:
never through an existing name or a symlink planted there), in the target's folder, with the
permissions of any other file the user creates (``0666`` less the umask, not ``mkstemp``'s
``0600``). Their names carry this host and process id, ``.<target>.<host>-<pid>-<random>.tmp``,
so a later write to the same target removes those of a process of this host that no longer
runs (a ``kill -9`` leaves them behind) and never collides with them.

A command that writes several files writes them all or none (:func:`output_batch`): inside
the batch every write is staged in memory; at its end all are written to temporary files, and
only when all of those succeeded are they renamed into place.
"""

from __future__ import annotations

import contextlib
import contextvars
import glob
import os
import re
import socket
import stat
import tempfile
from collections.abc import Iterator
from pathlib import Path

_HOST = re.sub(r"[^A-Za-z0-9-]", "", socket.gethostname().split(".")[0])[:32] or "host"
_TEMP_TAG = re.compile(re.escape(_HOST) + r"-(?P<pid>\d+)-[a-z0-9_]+\.tmp")


# temporary files this process created and has not yet renamed or removed (see remove_own_temps)
_OWN_TEMPS: set[str] = set()


def forget_temp(path: str | Path) -> None:
    """``path`` (from :func:`create_temp`) was renamed into place or removed."""
    _OWN_TEMPS.discard(str(path))


def remove_own_temps() -> None:
    """Remove every temporary file this process still has open: called by a process that is
    told to stop at once (a sweep worker whose sweep was killed), so it leaves none behind."""
    for name in list(_OWN_TEMPS):
        with contextlib.suppress(OSError):
            os.unlink(name)
        _OWN_TEMPS.discard(name)


def file_mode() -> int:
    """Permission bits of a new regular file of this process: 0666 less the umask."""
    try:  # Linux: read the umask without changing it (thread-safe)
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return 0o666 & ~int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def process_alive(pid: int) -> bool:
    """True while process ``pid`` runs (a zombie, killed but not yet reaped, is not)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    try:
        with open(f"/proc/{pid}/stat", "rb") as fh:
            return fh.read().rsplit(b")", 1)[1].split()[0] not in (b"Z", b"X")
    except (OSError, IndexError):
        return True


def remove_stale_temps(target: str | Path) -> list[Path]:
    """Remove the temporary files of ``target`` left by processes of this host that no
    longer run; return them. Never follows a symlink (a planted one is only unlinked)."""
    p = Path(target)
    removed = []
    head = f".{p.name}."
    for name in glob.glob(glob.escape(str(p.parent / head)) + "*.tmp"):
        m = _TEMP_TAG.fullmatch(os.path.basename(name)[len(head):])
        if m is None or int(m["pid"]) == os.getpid():
            continue
        if process_alive(int(m["pid"])):
            continue
        with contextlib.suppress(OSError):
            os.unlink(name)
            removed.append(Path(name))
    return removed


def create_temp(target: str | Path) -> tuple[int, Path]:
    """Create a new temporary file beside ``target`` exclusively; return ``(fd, path)``.

    The folder is created if needed. The file has the user's normal permissions
    (:func:`file_mode`). Stale temporary files of ``target`` are removed first
    (:func:`remove_stale_temps`).
    """
    p = Path(target)
    p.parent.mkdir(parents=True, exist_ok=True)
    remove_stale_temps(p)
    fd, tmp = tempfile.mkstemp(dir=p.parent, prefix=f".{p.name}.{_HOST}-{os.getpid()}-",
                               suffix=".tmp")
    _OWN_TEMPS.add(tmp)
    try:
        os.fchmod(fd, file_mode())
    except BaseException:
        os.close(fd)
        os.unlink(tmp)
        forget_temp(tmp)
        raise
    return fd, Path(tmp)


def same_file(fd: int, path: str | Path) -> bool:
    """True if ``path`` names (without following a symlink) the regular file open as ``fd``."""
    try:
        a, b = os.fstat(fd), os.lstat(path)
    except OSError:
        return False
    return stat.S_ISREG(b.st_mode) and (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino)


def _write_now(path: Path, data: bytes) -> None:
    fd, tmp = create_temp(path)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    finally:
        forget_temp(tmp)


class OutputBatch:
    """Files staged in memory by :func:`write_bytes_atomic` inside :func:`output_batch`."""

    def __init__(self) -> None:
        self.files: dict[Path, bytes] = {}

    def add(self, path: Path, data: bytes) -> None:
        self.files[path] = data

    def commit(self) -> list[Path]:
        """Write every staged file to a temporary file, then rename them all into place; on
        any failure before the renames remove what was created (files and new folders)."""
        made_dirs: list[Path] = []
        temps: list[tuple[Path, Path]] = []
        try:
            for path, data in self.files.items():
                missing = [a for a in (path.parent, *path.parent.parents) if not a.exists()]
                path.parent.mkdir(parents=True, exist_ok=True)
                made_dirs += reversed(missing)
                fd, tmp = create_temp(path)
                temps.append((tmp, path))
                with os.fdopen(fd, "wb") as fh:
                    fh.write(data)
        except BaseException:
            for tmp, _ in temps:
                tmp.unlink(missing_ok=True)
                forget_temp(tmp)
            for d in reversed(made_dirs):
                with contextlib.suppress(OSError):
                    d.rmdir()
            raise
        for tmp, path in temps:
            os.replace(tmp, path)
            forget_temp(tmp)
        return list(self.files)


_BATCH: contextvars.ContextVar[OutputBatch | None] = contextvars.ContextVar(
    "gaitload_output_batch", default=None)


@contextlib.contextmanager
def output_batch() -> Iterator[OutputBatch]:
    """Write every file of the block all or none: writes made through this module inside the
    block are staged and committed at its end (:meth:`OutputBatch.commit`); nothing is
    written if the block raises. Batches nest: an inner batch joins the outer one."""
    outer = _BATCH.get()
    if outer is not None:
        yield outer
        return
    batch = OutputBatch()
    token = _BATCH.set(batch)
    try:
        yield batch
    finally:
        _BATCH.reset(token)
    batch.commit()


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through an exclusive temporary file beside it, then rename
    (or stage it, inside :func:`output_batch`)."""
    p = Path(path)
    batch = _BATCH.get()
    if batch is not None:
        batch.add(p, bytes(data))
    else:
        _write_now(p, data)
    return p


def write_text_atomic(path: str | Path, text: str) -> Path:
    """UTF-8 text through :func:`write_bytes_atomic` (line endings kept as given)."""
    return write_bytes_atomic(path, text.encode("utf-8"))


def save_figure_atomic(fig, path: str | Path, **savefig_kwargs) -> Path:
    """Render a matplotlib figure in memory and write it atomically."""
    import io

    buf = io.BytesIO()
    fig.savefig(buf, **savefig_kwargs)
    return write_bytes_atomic(path, buf.getvalue())
