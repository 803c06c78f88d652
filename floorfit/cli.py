"""The ``floorfit`` command line: a thin layer over the library.

Each sub-command lives in its own module under :mod:`floorfit.commands` and provides
``NAME``, ``HELP``, ``add_arguments(parser)`` and ``run(args) -> int``. Modules are
discovered automatically. Bad input (any :class:`~floorfit.errors.FloorfitError`) prints
one line and exits with code 2; ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys

from floorfit import __version__
from floorfit.errors import FloorfitError

__all__ = ["main", "build_parser"]

EXIT_OK, EXIT_FAIL, EXIT_BAD_INPUT = 0, 1, 2


def _command_modules():
    from floorfit import commands
    mods = []
    for info in sorted(pkgutil.iter_modules(commands.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        mods.append(importlib.import_module(f"{commands.__name__}.{info.name}"))
    return sorted(mods, key=lambda m: getattr(m, "ORDER", 50))


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit code 2, like every other bad input
        self.exit(EXIT_BAD_INPUT, f"floorfit: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="floorfit", description="Check whether a vehicle fits a DXF floor plan.")
    parser.add_argument("--version", action="version", version=f"floorfit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for mod in _command_modules():
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP)
        p.add_argument("--debug", action="store_true", help="show a traceback on errors")
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return int(args._run(args))
    except FloorfitError as exc:
        if getattr(args, "debug", False):
            raise
        print(f"floorfit {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print(f"floorfit {args.command}: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
