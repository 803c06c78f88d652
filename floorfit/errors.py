"""Exceptions in the user's terms.

Every error floorfit raises for bad input is a :class:`FloorfitError`. Its text is one
line that names the file, the place inside it (entity handle, TOML key, line) and the
problem, so the command line can print it as-is and exit with code 2.
"""

from __future__ import annotations

__all__ = [
    "FloorfitError",
    "PlanImportError",
    "VehicleError",
    "SiteError",
    "InputError",
    "LimitExceeded",
]


class FloorfitError(Exception):
    """Bad input: a one-line explanation naming the file, the place and the problem.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    path : str or None
        The file the problem is in (None for command-line arguments).
    where : str or None
        The place inside the file: an entity handle (``"entity #1F3"``), a TOML key
        (``"footprint.outline"``), a line (``"line 12"``).
    """

    def __init__(self, message: str, path: str | None = None, where: str | None = None):
        self.message = " ".join(str(message).split())  # always one line
        self.path = None if path is None else str(path)
        self.where = where
        super().__init__(str(self))

    def __str__(self) -> str:
        parts = [p for p in (self.path, self.where) if p]
        parts.append(self.message)
        return ": ".join(parts)


class PlanImportError(FloorfitError):
    """A drawing cannot be read or turned into an obstacle model."""


class VehicleError(FloorfitError):
    """A vehicle file is missing, malformed or physically implausible."""


class SiteError(FloorfitError):
    """A site file (stations, layer roles, clearances) is malformed."""


class InputError(FloorfitError):
    """A command-line value (pose, station, option) is malformed or impossible."""


class LimitExceeded(FloorfitError):
    """A documented safety limit (nesting depth, expanded entities, vertices) was exceeded."""
