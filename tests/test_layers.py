"""The layer rule DEVELOPERS.md states, checked on the code's own imports: the
presentation layer (report/) is imported only by cli/ and pipeline/, and nothing imports
cli/, so a table's text can only be made from data the library returns."""

from __future__ import annotations

import ast
from pathlib import Path

from .conftest import ROOT

PACKAGE = ROOT / "src" / "trawl"


def imports_of(path: Path, text: str | None = None) -> set[str]:
    """Absolute dotted names a module of the package imports (relative imports resolved)."""
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    here = parts[:-1]  # the package the module sits in (for __init__, the package itself)
    source = path.read_text(encoding="utf-8") if text is None else text
    out = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom):
            base = here[: len(here) - (node.level - 1)] if node.level else []
            mod = ".".join(base + ([node.module] if node.module else []))
            out.add(mod)
            out.update(f"{mod}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


def importers(target: str) -> list[str]:
    return sorted(p.relative_to(PACKAGE).as_posix() for p in PACKAGE.rglob("*.py")
                  if any(n == target or n.startswith(target + ".") for n in imports_of(p)))


def test_report_is_imported_only_by_cli_and_pipeline():
    outside = [p for p in importers("trawl.report")
               if not p.startswith(("report/", "cli/", "pipeline/"))]
    assert outside == []


def test_nothing_imports_the_cli():
    assert [p for p in importers("trawl.cli") if not p.startswith("cli/")] == []


def test_relative_imports_resolve_to_the_package_paths():
    # the checker itself: a breach written with a relative import is seen as one
    assert "trawl.report.text" in imports_of(PACKAGE / "scores.py", "from .report import text\n")
    assert "trawl.report" in imports_of(PACKAGE / "index" / "build.py", "from ..report import x\n")
