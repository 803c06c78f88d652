"""Opening a DXF file: plain read first (handles binary DXF), recovery for damaged ASCII.

``ezdxf.readfile`` reads ASCII and binary DXF but stops at the first structural error;
``ezdxf.recover.readfile`` repairs damaged ASCII files (not binary ones) and reports
what its audit fixed. Every failure becomes a one-line :class:`PlanImportError`;
messages the DXF library logs while reading are kept as import issues.
"""

from __future__ import annotations

import gc
import logging
from contextlib import contextmanager
from pathlib import Path

import ezdxf
from ezdxf import recover
from ezdxf.entities import DXFGraphic

from floorfit.errors import PlanImportError

__all__ = ["open_drawing", "audit_drawing", "no_cyclic_gc"]

_MAX_REPORTED = 50
_MAX_AUDIT_LISTED = 20


class _Collector(logging.Handler):
    def __init__(self):
        super().__init__(level=logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record):
        if len(self.messages) < _MAX_REPORTED:
            self.messages.append(" ".join(record.getMessage().split()))


@contextmanager
def _capture_library_log():
    logger = logging.getLogger("ezdxf")
    handler = _Collector()
    old_propagate = logger.propagate
    logger.addHandler(handler)
    logger.propagate = False
    try:
        yield handler.messages
    finally:
        logger.removeHandler(handler)
        logger.propagate = old_propagate


@contextmanager
def no_cyclic_gc():
    """Python's cyclic garbage collector paused for a bulk read, restored after.

    Reading a drawing allocates millions of long-lived objects (ezdxf entities, then
    primitives); each allocation burst triggers collections that traverse all of them again
    while finding almost nothing to free (temporary tags are freed by reference counting).
    Pausing it cuts the CPU time of ``ezdxf.readfile`` on a 47.8 MB drawing by about a fifth,
    at the same peak memory (measured: 12.8 s -> 10.0 s, 546 MB both).
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def _ends_with_eof(path: Path) -> bool:
    """True when an ASCII DXF ends with the EOF marker (binary files are not checked)."""
    with path.open("rb") as fh:
        head = fh.read(22)
        if head.startswith(b"AutoCAD Binary DXF"):
            return True
        fh.seek(0, 2)
        size = fh.tell()
        fh.seek(max(0, size - 64))
        tail = fh.read().decode("latin-1", "replace").split()
    return bool(tail) and tail[-1].upper() == "EOF"


def _audit_issues(auditor) -> list[tuple[str, str, str | None]]:
    """Audit fixes of drawn entities one by one (with handles); fixes of non-graphical
    objects (dictionaries, buffers, tables) summed up in one line."""
    out = []
    other: list[str] = []
    entries = [("fix", e) for e in auditor.fixes] + [("error", e) for e in auditor.errors]
    for what, entry in entries:
        entity = getattr(entry, "entity", None)
        message = " ".join(str(entry.message).split())
        if isinstance(entity, DXFGraphic):
            if len(out) < _MAX_AUDIT_LISTED:
                out.append(("repaired", f"audit {what}: {message}", entity.dxf.get("handle")))
            else:
                other.append(message)
        else:
            other.append(message)
    if other:
        out.append(("repaired", f"audit repaired {len(other)} problem(s) in non-graphical objects or beyond the "
                    f"first {_MAX_AUDIT_LISTED}, e.g. {other[0]}", None))
    return out


def audit_drawing(doc, path: str) -> list[tuple[str, str, str | None]]:
    """Run ezdxf's audit (repairs invalid structures, e.g. DIMENSIONs without geometry) and
    report its fixes. Call it only after the block graph was checked (no cycles, bounded depth)."""
    try:
        auditor = doc.audit()
    except RecursionError:
        raise PlanImportError("structure too deeply nested to check", path) from None
    except Exception as exc:
        return [("repaired", f"audit failed: {type(exc).__name__}: {' '.join(str(exc).split())}", None)]
    return _audit_issues(auditor)


def open_drawing(path: str | Path):
    """Read a DXF drawing (no audit on the plain path: see :func:`audit_drawing`).

    Returns
    -------
    (doc, issues)
        the ezdxf document and a list of ``(kind, message, handle)`` tuples: audit
        fixes from recovery, messages logged by the reader, a truncation warning.

    Raises
    ------
    PlanImportError
        missing file, folder, empty file, not a DXF file, damaged beyond recovery.
    """
    p = Path(path)
    name = str(path)
    if not p.exists():
        raise PlanImportError("file not found", name)
    if p.is_dir():
        raise PlanImportError("is a folder, expected a DXF file", name)
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise PlanImportError(f"cannot read: {exc.strerror}", name) from None
    if size == 0:
        raise PlanImportError("file is empty", name)
    issues: list[tuple[str, str, str | None]] = []
    with _capture_library_log() as logged, no_cyclic_gc():
        try:
            doc = ezdxf.readfile(name)
        except OSError as exc:
            if "not a DXF file" in str(exc):
                raise PlanImportError("not a DXF file (no DXF section structure at the start)", name) from None
            raise PlanImportError(f"cannot read: {exc.strerror or exc}", name) from None
        except Exception as first:
            first_msg = " ".join(str(first).split())
            try:
                doc, auditor = recover.readfile(name)
            except Exception as exc:
                raise PlanImportError(f"damaged DXF that cannot be recovered ({' '.join(str(exc).split())})",
                                      name) from None
            issues.append(("repaired", f"damaged DXF read in recovery mode ({first_msg})", None))
            issues.extend(_audit_issues(auditor))
            if not _ends_with_eof(p):
                issues.append(("truncated", "the file ends without the EOF marker: it was cut short; "
                               "geometry after the cut is missing", None))
    for msg in logged:
        issues.append(("reader", msg, None))
    return doc, issues
