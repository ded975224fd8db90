"""What every figure shares: pyplot on the non-interactive Agg backend, imported on first use,
and PNG output that is atomic and carries no software stamp (same figure, same bytes).
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from contextvars import ContextVar
from pathlib import Path
from typing import Any

from sim.core.atomic import save_figure_atomic

_BANNER: ContextVar[str | None] = ContextVar("gaitload_figure_banner", default=None)


@contextlib.contextmanager
def banner(text: str | None) -> Iterator[None]:
    """Every figure saved inside the block carries ``text`` across its top (a what-if check
    labels its figures so); ``None`` does nothing."""
    token = _BANNER.set(text)
    try:
        yield
    finally:
        _BANNER.reset(token)


def stamp(fig: Any) -> None:
    """Put the current banner (if any) on ``fig``, in red across the top."""
    text = _BANNER.get()
    if text:
        fig.text(0.5, 0.995, text, ha="center", va="top", fontsize=7, color="#b00000",
                 wrap=True)


def pyplot() -> Any:
    """matplotlib's pyplot on the non-interactive Agg backend (imported on first use)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def save_png(fig: Any, path: str | Path, dpi: int = 100, caption: str | None = None) -> Path:
    """Write ``fig`` as PNG atomically (temporary file, rename), without a software stamp so
    the same figure gives the same bytes; close the figure."""
    if caption:
        fig.text(0.01, 0.005, caption, fontsize=6, color="0.4")
    stamp(fig)
    try:
        p = save_figure_atomic(fig, path, format="png", dpi=dpi, metadata={"Software": None})
    finally:
        if hasattr(fig, "number"):  # a pyplot figure: release it
            pyplot().close(fig)
    return p
