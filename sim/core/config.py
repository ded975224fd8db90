"""Strict reading of gaitload's TOML files.

A file is validated against a *spec*: a mapping from key to :class:`Field` (a value) or to a
nested mapping (a table). Unknown keys are errors, types are checked exactly (an int is
accepted where a float is expected, never the other way round), ranges are checked, and every
error names the file, the dotted key and what was expected.

Typical use::

    SPEC = {"duration_s": Field(float, min=0.0, min_inclusive=False), "ground": {...}}
    data = load_toml(path)
    values = validate(data, SPEC, file=path)
"""

from __future__ import annotations

import copy
import math
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim.core.errors import InputError
from sim.core.plausible import INT64_MAX, plausibility_error

Spec = Mapping[str, Any]  # values are Field or nested Spec


@dataclass(frozen=True)
class Field:
    """One value in a file.

    kind: ``float``, ``int``, ``str``, ``bool``, ``list`` or ``dict`` (free-form table).
    item: for lists, the kind of each item. length: exact list length, if fixed.
    """

    kind: type
    doc: str = ""
    required: bool = False
    default: Any = None
    min: float | None = None
    max: float | None = None
    min_inclusive: bool = True
    max_inclusive: bool = True
    choices: tuple[Any, ...] | None = None
    item: type | None = None
    length: int | None = None
    check: Callable[[Any], str | None] | None = None  # returns an error text or None

    def expectation(self) -> str:
        if self.kind is list:
            inner = self.item.__name__ if self.item else "value"
            n = f"{self.length} " if self.length else ""
            text = f"a list of {n}{inner}s"
        elif self.choices is not None:
            return "one of " + ", ".join(repr(c) for c in self.choices)
        else:
            text = {float: "a number", int: "an integer", str: "a string", bool: "true or false",
                    dict: "a table"}.get(self.kind, self.kind.__name__)
        bounds = []
        if self.min is not None:
            bounds.append((">= " if self.min_inclusive else "> ") + f"{self.min:g}")
        if self.max is not None:
            bounds.append(("<= " if self.max_inclusive else "< ") + f"{self.max:g}")
        if bounds:
            text += " " + " and ".join(bounds)
        if self.doc:
            text += f" ({self.doc})"
        return text


def load_toml(path: str | Path, what: str = "file") -> dict[str, Any]:
    """Read a TOML file; a missing or malformed file is an :class:`InputError`."""
    p = Path(path)
    if not p.is_file():
        raise InputError(str(p), None, f"an existing {what} (no such file)")
    try:
        with p.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(p), None, f"valid TOML ({exc})") from None
    except UnicodeDecodeError:
        raise InputError(str(p), None, "a UTF-8 text file") from None


def _type_ok(value: Any, kind: type) -> bool:
    if kind is float:
        return isinstance(value, int | float) and not isinstance(value, bool)
    if kind is int:
        return isinstance(value, int) and not isinstance(value, bool)
    return isinstance(value, kind)


def _check_value(value: Any, f: Field, file: str | None, key: str) -> Any:
    if not _type_ok(value, f.kind):
        raise InputError(file, key, f.expectation(), value)
    if f.kind is float:
        value = float(value)
        if not math.isfinite(value):
            raise InputError(file, key, "a finite number", value)
    if f.kind is list:
        if f.length is not None and len(value) != f.length:
            raise InputError(file, key, f.expectation(), value)
        if f.item is not None:
            out = []
            for i, v in enumerate(value):
                if not _type_ok(v, f.item):
                    raise InputError(file, f"{key}[{i}]", f.expectation(), v)
                if f.item is float and not math.isfinite(v):
                    raise InputError(file, f"{key}[{i}]", "a finite number", v)
                out.append(float(v) if f.item is float else v)
            value = out
    if f.choices is not None and value not in f.choices:
        raise InputError(file, key, f.expectation(), value)
    nums = value if f.kind is list and f.item in (float, int) else (
        [value] if f.kind in (float, int) else [])
    for v in nums:
        bad = False
        if f.min is not None:
            bad |= v < f.min if f.min_inclusive else v <= f.min
        if f.max is not None:
            bad |= v > f.max if f.max_inclusive else v >= f.max
        if bad:
            raise InputError(file, key, f.expectation(), value)
    for i, v in enumerate(nums):
        why = plausibility_error(key, v)
        if why:
            where = f"{key}[{i}]" if f.kind is list else key
            raise InputError(file, where, why, v)
    if f.check is not None:
        msg = f.check(value)
        if msg:
            raise InputError(file, key, msg, value)
    return value


def validate(data: Mapping[str, Any], spec: Spec, file: str | Path | None = None,
             prefix: str = "") -> dict[str, Any]:
    """Check ``data`` against ``spec``; return a new dict with defaults filled in."""
    fname = None if file is None else str(file)
    if not isinstance(data, Mapping):
        raise InputError(fname, prefix.rstrip(".") or None, "a table", data)
    check_numbers(data, fname, prefix.rstrip("."))
    out: dict[str, Any] = {}
    for key in data:
        if key not in spec:
            known = ", ".join(sorted(spec)) or "none"
            raise InputError(fname, prefix + key, f"a known key (unknown key; known: {known})")
    for key, f in spec.items():
        full = prefix + key
        if isinstance(f, Field):
            if key in data:
                out[key] = _check_value(data[key], f, fname, full)
            elif f.required:
                raise InputError(fname, full, f"this key to be present: {f.expectation()}")
            else:
                out[key] = copy.deepcopy(f.default)
        else:  # nested table
            sub = data.get(key, {})
            out[key] = validate(sub, f, file, full + ".")
    return out


def check_numbers(value: Any, file: str | None, key: str) -> None:
    """Every number anywhere in ``value`` (tables, lists, nested) is finite and every integer
    fits in 64 bits: TOML allows ``nan``, ``inf`` and integers of any size, none of which a
    gaitload key can use (HDF5 attributes and numpy hold 64-bit integers)."""
    if isinstance(value, bool):
        return
    if isinstance(value, float):
        if not math.isfinite(value):
            raise InputError(file, key or None, "a finite number", value)
    elif isinstance(value, int):
        if not -INT64_MAX - 1 <= value <= INT64_MAX:
            raise InputError(file, key or None, "an integer that fits in 64 bits (at most "
                             f"{INT64_MAX})", value if abs(value) < 10**40 else "a huge integer")
    elif isinstance(value, Mapping):
        for k, v in value.items():
            check_numbers(v, file, f"{key}.{k}" if key else str(k))
    elif isinstance(value, list | tuple):
        for i, v in enumerate(value):
            check_numbers(v, file, f"{key}[{i}]")


def check_option_number(value: Any, option: str, lo: float, hi: float, what: str,
                        lo_open: bool = False) -> float:
    """A number given on the command line: finite and within ``[lo, hi]`` (``(lo, hi]`` with
    ``lo_open``), else an :class:`InputError` naming the option and ``what`` it means."""
    ok = isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)
    if ok:
        ok = (value > lo if lo_open else value >= lo) and value <= hi
    if not ok:
        raise InputError(option, None, f"{what}: a number {'>' if lo_open else '>='} {lo:g} "
                         f"and <= {hi:g}", value)
    return float(value)


def set_dotted(data: dict[str, Any], dotted: str, value: Any) -> None:
    """Set ``data['a']['b'] = value`` for ``dotted == 'a.b'``, creating tables as needed."""
    parts = dotted.split(".")
    node: Any = data
    for p in parts[:-1]:
        if isinstance(node, list):
            if not p.isdigit() or int(p) >= len(node):
                raise InputError("--set", dotted, f"an index below {len(node)} at '{p}'")
            node = node[int(p)]
            continue
        nxt = node.setdefault(p, {})
        if not isinstance(nxt, dict | list):
            raise InputError("--set", dotted, f"'{p}' to be a table, it is a value")
        node = nxt
    last = parts[-1]
    if isinstance(node, list):
        if not last.isdigit() or int(last) >= len(node):
            raise InputError("--set", dotted, f"an index below {len(node)} at '{last}'")
        node[int(last)] = value
    else:
        node[last] = value


def parse_override(text: str) -> tuple[str, Any]:
    """Parse ``KEY=VALUE`` as given to ``--set``; VALUE is read as a TOML value, else a string."""
    if "=" not in text:
        raise InputError("--set", text, "KEY=VALUE")
    key, raw = text.split("=", 1)
    key = key.strip()
    if not key or any(not part for part in key.split(".")):
        raise InputError("--set", text, "a dotted key such as robot.leg.thigh_length_m")
    try:
        value = tomllib.loads(f"v = {raw}")["v"]
    except tomllib.TOMLDecodeError:
        value = raw
    return key, value


def dump_toml(data: Mapping[str, Any]) -> str:
    """Write a (resolved) nested dict back as TOML text, deterministically (sorted keys)."""
    lines: list[str] = []

    def fmt(v: Any) -> str:
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, int | float):
            return repr(v)
        if isinstance(v, str):
            return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
        if isinstance(v, list | tuple):
            if v and all(isinstance(x, Mapping) for x in v):
                raise TypeError("array of tables handled by caller")
            return "[" + ", ".join(fmt(x) for x in v) + "]"
        if v is None:
            return '""'
        raise TypeError(f"cannot write {type(v).__name__} to TOML")

    def emit(table: Mapping[str, Any], path: str) -> None:
        scalars = {k: v for k, v in table.items() if not isinstance(v, Mapping)
                   and not (isinstance(v, list) and v and all(isinstance(x, Mapping) for x in v))}
        for k in sorted(scalars):
            lines.append(f"{k} = {fmt(scalars[k])}")
        for k in sorted(table):
            v = table[k]
            sub = f"{path}.{k}" if path else k
            if isinstance(v, Mapping):
                lines.append("")
                lines.append(f"[{sub}]")
                emit(v, sub)
            elif isinstance(v, list) and v and all(isinstance(x, Mapping) for x in v):
                for item in v:
                    lines.append("")
                    lines.append(f"[[{sub}]]")
                    emit(item, sub)

    emit(data, "")
    return "\n".join(lines).strip() + "\n"
