"""Strict reading of the user's TOML files: unknown keys and wrong types are errors.

A typo in a vehicle or site file must not be silently ignored (a misspelt ``margin``
would otherwise give a vehicle with no safety margin). Every error names the file, the
dotted key and the problem, with a "did you mean" hint for near-misses.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from floorfit.errors import FloorfitError

__all__ = ["read_toml", "check_keys", "get_number", "get_string", "get_bool", "get_points"]


def read_toml(path: str | Path, error: type[FloorfitError]) -> dict[str, Any]:
    """Read a TOML file, raising ``error`` with the file name and line on any problem."""
    p = Path(path)
    if not p.exists():
        raise error("file not found", str(p))
    if p.is_dir():
        raise error("is a folder, expected a TOML file", str(p))
    try:
        text = p.read_bytes().decode("utf-8")
    except UnicodeDecodeError:
        raise error("not a text file (expected TOML, UTF-8)", str(p)) from None
    except OSError as exc:
        raise error(f"cannot read: {exc.strerror}", str(p)) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"not valid TOML: {exc}", str(p)) from None


def check_keys(table: dict[str, Any], allowed: Iterable[str], path: str, prefix: str,
               error: type[FloorfitError]) -> None:
    """Raise on the first key of ``table`` not in ``allowed``, suggesting the closest one."""
    allowed = list(allowed)
    for key in table:
        if key not in allowed:
            where = f"{prefix}{key}"
            hint = difflib.get_close_matches(key, allowed, n=1, cutoff=0.6)
            msg = f"unknown key '{key}'"
            if hint:
                msg += f" (did you mean '{hint[0]}'?)"
            else:
                msg += f" (allowed here: {', '.join(sorted(allowed))})"
            raise error(msg, path, where)


def get_number(table: dict[str, Any], key: str, path: str, prefix: str,
               error: type[FloorfitError], default: float | None = None,
               minimum: float | None = None, maximum: float | None = None,
               required: bool = False) -> float | None:
    """A finite number at ``key`` (ints accepted), within optional bounds."""
    where = f"{prefix}{key}"
    if key not in table:
        if required:
            raise error("missing required key", path, where)
        return default
    value = table[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise error(f"expected a number, got {type(value).__name__} {value!r}", path, where)
    value = float(value)
    if not math.isfinite(value):
        raise error(f"expected a finite number, got {value}", path, where)
    if minimum is not None and value < minimum:
        raise error(f"must be at least {minimum:g}, got {value:g}", path, where)
    if maximum is not None and value > maximum:
        raise error(f"must be at most {maximum:g}, got {value:g}", path, where)
    return value


def get_string(table: dict[str, Any], key: str, path: str, prefix: str,
               error: type[FloorfitError], default: str | None = None,
               choices: Iterable[str] | None = None) -> str | None:
    """A string at ``key``, optionally one of ``choices``."""
    where = f"{prefix}{key}"
    if key not in table:
        return default
    value = table[key]
    if not isinstance(value, str):
        raise error(f"expected a string, got {type(value).__name__} {value!r}", path, where)
    if choices is not None:
        choices = list(choices)
        if value not in choices:
            hint = difflib.get_close_matches(value, choices, n=1, cutoff=0.5)
            extra = f" (did you mean '{hint[0]}'?)" if hint else ""
            raise error(f"'{value}' is not one of {', '.join(choices)}{extra}", path, where)
    return value


def get_bool(table: dict[str, Any], key: str, path: str, prefix: str,
             error: type[FloorfitError], default: bool | None = None) -> bool | None:
    """A boolean at ``key``."""
    if key not in table:
        return default
    value = table[key]
    if not isinstance(value, bool):
        raise error(f"expected true or false, got {value!r}", path, f"{prefix}{key}")
    return value


def get_points(table: dict[str, Any], key: str, path: str, prefix: str,
               error: type[FloorfitError]) -> list[tuple[float, float]]:
    """A list of ``[x, y]`` pairs of finite numbers at ``key``."""
    where = f"{prefix}{key}"
    value = table.get(key)
    if not isinstance(value, list):
        raise error(f"expected a list of [x, y] points, got {type(value).__name__}", path, where)
    points = []
    for i, item in enumerate(value):
        if (not isinstance(item, list) or len(item) != 2
                or any(isinstance(v, bool) or not isinstance(v, (int, float)) for v in item)):
            raise error(f"point {i + 1} must be [x, y] with two numbers, got {item!r}", path, where)
        x, y = float(item[0]), float(item[1])
        if not (math.isfinite(x) and math.isfinite(y)):
            raise error(f"point {i + 1} has a non-finite coordinate {item!r}", path, where)
        points.append((x, y))
    return points
