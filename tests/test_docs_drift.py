"""Docs that cannot drift: DEVELOPERS.md names every module of the package, so a new
module cannot land without a line saying where it sits. (The README tour and the
results.json schema have their own tests: test_readme_tour.py, test_bundle.py.)"""

from __future__ import annotations

import re

from .conftest import ROOT

PACKAGE = ROOT / "src" / "trawl"
GUIDE = ROOT / "DEVELOPERS.md"
MAX_CHARS = 8000  # the issue that set the guide's shape asked for at most this much


def module_names() -> list[tuple[str, str]]:
    """(package folder or '', module name) for every module; a sub-package counts as
    'name/' by its folder, the top-level package file and ``__main__`` not at all."""
    names = []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE)
        if rel.name == "__main__.py" or rel == PACKAGE.joinpath("__init__.py").relative_to(PACKAGE):
            continue
        if rel.name == "__init__.py":
            names.append(("", rel.parent.as_posix() + "/"))
        else:
            names.append((rel.parent.as_posix() if len(rel.parts) > 1 else "", rel.stem))
    return names


def layers_section() -> str:
    text = GUIDE.read_text(encoding="utf-8")
    return text.split("\n## Layers\n", 1)[1].split("\n## ", 1)[0]


def test_every_module_is_named_in_the_layers_section():
    section = layers_section()
    # one numbered item per layer; a package's modules are named in the item naming it
    items = re.split(r"\n(?=\d+\. )", section)
    missing = []
    for folder, name in module_names():
        if folder:
            item = next((i for i in items if i[:1].isdigit() and f"`{folder}/`" in i), "")
            ok = f"`{name}`" in item or f"`{folder}/{name}`" in item
        else:
            ok = f"`{name}`" in section
        if not ok:
            missing.append(f"{folder + '/' if folder else ''}{name}")
    assert not missing, f"modules missing from DEVELOPERS.md's Layers section: {missing}"


def test_guide_stays_short():
    assert len(GUIDE.read_text(encoding="utf-8")) <= MAX_CHARS


def test_stemming_caution_quotes_the_measured_ratios():
    # The caution eval prints quotes a measurement; the write-up of that measurement and
    # the page the caution points to must give the same figures.
    from trawl.silver import QUALITY_DOC, STEMMING_CAUTION

    ratios = re.findall(r"\d\.\d\d-\d\.\d\dx", STEMMING_CAUTION)
    assert len(ratios) == 2, STEMMING_CAUTION
    for page in (ROOT / QUALITY_DOC, ROOT / "bench/results/2026-12-03-silver-stemming.md"):
        text = " ".join(page.read_text(encoding="utf-8").split())
        for r in ratios:
            assert r in text, (page, r)
