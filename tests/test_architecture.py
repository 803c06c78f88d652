"""The package layout's own rules, checked on the source tree (README "How it works").

The layers themselves are an import-linter contract (pyproject ``[tool.importlinter]``, run in CI
with ``lint-imports``); these tests add what a layers contract does not see: import circles
between modules of one package, and modules that have grown past one job.
"""

from __future__ import annotations

from pathlib import Path

import grimp
import networkx as nx

import floorfit

PACKAGE_DIR = Path(floorfit.__file__).parent
#: "No module over about 600 lines" (issue on the pipeline layout); a little slack for docstrings.
MAX_MODULE_LINES = 650


def test_no_import_circles_between_modules():
    graph = grimp.build_graph("floorfit")
    G = nx.DiGraph()
    for module in graph.modules:
        for imported in graph.find_modules_directly_imported_by(module):
            if imported != "floorfit":          # the root only holds the version and lazy names
                G.add_edge(module, imported)
    circles = [sorted(c) for c in nx.strongly_connected_components(G) if len(c) > 1]
    assert circles == []


def test_every_stage_package_says_what_it_owns_and_may_import():
    for name in ("plan", "vehicles", "cspace", "motion", "analysis", "articulated", "report", "fleet", "commands"):
        doc = (PACKAGE_DIR / name / "__init__.py").read_text(encoding="utf-8")
        assert "May import" in doc, name


def test_no_module_over_the_size_limit():
    sizes = {p.relative_to(PACKAGE_DIR).as_posix(): len(p.read_text(encoding="utf-8").splitlines())
             for p in PACKAGE_DIR.rglob("*.py")}
    assert {k: v for k, v in sizes.items() if v > MAX_MODULE_LINES} == {}
