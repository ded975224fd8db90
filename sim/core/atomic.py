"""Atomic file output: every file gaitload writes goes through a temporary file in the same
folder and is renamed into place, so an interrupted run never leaves a half-written file.
(HDF5 records do the same in :mod:`sim.record`.)"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file beside it, then rename."""
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, p)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
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
