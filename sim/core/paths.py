"""Output paths checked before any work starts, and names from files made safe for paths.

A command calls :func:`check_output_file` or :func:`check_output_dir` for every path it will
write, before it simulates or reads anything, so a path that cannot be written (an existing
folder where a file goes, a file where a folder goes, a folder that is a file, a folder not
writable) is a bad input (exit 2) and not a failure after an hour of simulation.

Names read from files written by others (joint, leg and segment names in a run record, entry
names in a usage mix) reach file names, plot titles and CSV cells only after
:func:`check_name`: lower-case letters, digits and single underscores, so they can never hold
a path separator, ``..``, a control character or a CSV formula.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

from sim.core.errors import InputError

NAME_PATTERN = re.compile(r"[a-z][a-z0-9]{0,23}(?:_[a-z0-9]{1,24}){0,3}")
NAME_RULE = ("a name of lower-case letters and digits joined by single underscores, "
             "starting with a letter, at most 99 characters (such as fl_knee)")


def is_safe_name(name: object) -> bool:
    """True if ``name`` is a string matching :data:`NAME_PATTERN` (safe in a path)."""
    return isinstance(name, str) and NAME_PATTERN.fullmatch(name) is not None


def check_name(name: object, file: str | Path | None, key: str) -> str:
    """``name`` if :func:`is_safe_name`, else an :class:`InputError` naming file and key."""
    if not is_safe_name(name):
        raise InputError(None if file is None else str(file), key, NAME_RULE,
                         name if isinstance(name, str) and len(name) < 200 else type(name).__name__)
    return str(name)


def _first_existing(p: Path) -> Path:
    for a in (p, *p.parents):
        if os.path.lexists(a):
            return a
    return Path(".")


def _check_folder_chain(p: Path, option: str, what: str) -> None:
    """The nearest existing folder above ``p`` (or ``p``) is a writable folder."""
    anc = _first_existing(p)
    if anc != p and not anc.is_dir():
        raise InputError(option, None, f"{what} {p} in a folder, but {anc} is a file")
    if anc.is_dir() and not os.access(anc, os.W_OK | os.X_OK):
        raise InputError(option, None, f"{what} {p} in a folder you can write to "
                         f"({anc} is not writable)")


def check_output_file(path: str | Path, option: str) -> Path:
    """``path`` can be written as a file: not an existing folder, its folder (the nearest one
    that exists) a writable folder. ``option`` names the option in the message."""
    p = Path(path)
    if not str(path) or str(path).endswith(os.sep):
        raise InputError(option, None, "a file name (not a folder path)", str(path))
    if p.is_dir():
        raise InputError(option, None, f"a file to write, but {p} is an existing folder")
    if os.path.lexists(p) and not p.is_file():
        raise InputError(option, None, f"a regular file to write, but {p} is something else")
    _check_folder_chain(p, option, "a file")
    return p


def check_output_dir(path: str | Path, option: str) -> Path:
    """``path`` can be used as an output folder: a folder or not there yet, inside a writable
    folder. ``option`` names the option in the message."""
    p = Path(path)
    if not str(path):
        raise InputError(option, None, "a folder name", str(path))
    if os.path.lexists(p) and not p.is_dir():
        raise InputError(option, None, f"a folder to write into, but {p} is a file")
    _check_folder_chain(p, option, "a folder")
    return p


LABEL_PATTERN = re.compile(r"[A-Za-z0-9_][A-Za-z0-9_ .,:()+\-]{0,63}")
LABEL_RULE = ("a label of at most 64 letters, digits, spaces and _ . , : ( ) + - "
              "(it reaches tables and plot titles)")


def label_problem(text: object) -> str | None:
    """None if ``text`` is empty or a safe label (:data:`LABEL_PATTERN`), else the rule; for
    ``Field(check=...)``. Labels from shared files (usage-mix entries, sweep parameters) reach
    terminal tables, CSV cells and plot titles, so no control characters, no ``$`` (plot
    mathtext), no leading ``=`` (spreadsheet formulas)."""
    if text == "" or (isinstance(text, str) and LABEL_PATTERN.fullmatch(text)):
        return None
    return LABEL_RULE
