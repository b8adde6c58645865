"""The documentation site covers the public API and every methods page (no Sphinx run here).

The build itself (``sphinx-build -W -b html docs docs/_build``, warnings as errors) runs in
``.ci/run``; these checks are fast and fail as soon as a public name or a page is added without
its documentation.
"""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

import evidence

DOCS = Path(__file__).resolve().parents[1] / "docs"
#: Subpackages whose ``__all__`` is public API (``evidence.<name>``).
SUBPACKAGES = ("breaks", "cointegration", "convergence", "elasticity", "roots", "study",
               "study.steps", "tables", "trend")


def documented_names() -> set[str]:
    """Fully qualified names listed in an ``autosummary`` or ``auto*`` directive of ``docs/api``."""
    names: set[str] = set()
    for rst in sorted((DOCS / "api").glob("*.rst")):
        module = "evidence"
        in_summary = False
        for line in rst.read_text(encoding="utf-8").splitlines():
            if m := re.match(r"\.\. (?:py:)?currentmodule:: (\S+)", line):
                module = m.group(1)
            elif m := re.match(r"\.\. auto(?:function|class|data|exception):: (\S+)", line):
                names.add(m.group(1) if m.group(1).startswith("evidence") else f"{module}.{m.group(1)}")
            elif line.startswith(".. autosummary::"):
                in_summary = True
            elif in_summary and re.match(r"\s+:", line):
                continue
            elif in_summary and re.match(r"\s+\S+\s*$", line):
                name = line.strip()
                names.add(name if name.startswith("evidence.") else f"{module}.{name}")
            elif in_summary and line.strip() and not line.startswith(" "):
                in_summary = False
    return names


def public_names() -> dict[str, object]:
    """Every public name: ``evidence.__all__`` and the subpackages' ``__all__``, fully qualified."""
    names = {f"evidence.{n}": getattr(evidence, n) for n in evidence.__all__}
    for sub in SUBPACKAGES:
        module = importlib.import_module(f"evidence.{sub}")
        for n in module.__all__:
            names[f"evidence.{sub}.{n}"] = getattr(module, n)
    return names


def test_every_public_name_is_in_the_api_reference():
    documented = documented_names()
    top_objects = {id(getattr(evidence, n)) for n in evidence.__all__ if f"evidence.{n}" in documented}
    missing = []
    for name, obj in public_names().items():
        if name in documented:
            continue
        # A subpackage's re-export of a top-level name is documented under ``evidence``.
        if name.count(".") > 1 and id(obj) in top_objects and name.rsplit(".", 1)[1] in evidence.__all__:
            continue
        missing.append(name)
    assert not missing, f"add these public names to docs/api/index.rst: {missing}"


def test_the_api_reference_lists_no_unknown_name():
    known = set(public_names())
    unknown = sorted(n for n in documented_names() if n not in known)
    assert not unknown, f"docs/api lists names that are not public (not in any __all__): {unknown}"


def test_the_subpackage_list_is_complete():
    """A new subpackage with an ``__all__`` must be added to SUBPACKAGES (and so to the docs)."""
    root = Path(evidence.__file__).parent
    found = set()
    for init in root.rglob("__init__.py"):
        rel = init.parent.relative_to(root)
        if rel.parts and not any(p.startswith("_") for p in rel.parts):
            module = importlib.import_module("evidence." + ".".join(rel.parts))
            if hasattr(module, "__all__"):
                found.add(".".join(rel.parts))
    assert found <= set(SUBPACKAGES), sorted(found - set(SUBPACKAGES))


def toctree_entries(page: Path) -> set[str]:
    """The documents a Markdown page's ``{toctree}`` blocks list (relative to the page's folder)."""
    entries: set[str] = set()
    for block in re.findall(r"```\{toctree\}\n(.*?)```", page.read_text(encoding="utf-8"), re.S):
        for line in block.splitlines():
            line = line.strip()
            if line and not line.startswith(":"):
                entries.add(line)
    return entries


METHOD_PAGES = sorted(p for p in (DOCS / "methods").glob("*.md") if p.name != "index.md")


def test_every_methods_page_is_in_the_toctree():
    listed = toctree_entries(DOCS / "methods" / "index.md")
    assert {p.stem for p in METHOD_PAGES} <= listed
    assert "methods/index" in toctree_entries(DOCS / "index.md")


@pytest.mark.parametrize("page", [p for p in METHOD_PAGES if p.name != "size.md"], ids=lambda p: p.name)
def test_methods_page_has_math_assumptions_size_example_references(page: Path):
    text = page.read_text(encoding="utf-8")
    assert "$$" in text or re.search(r"\$[^$\n]+\$", text), "formulas as math ($...$ or $$...$$)"
    assert re.search(r"^#+ .*Assumptions|^\**Assumptions", text, re.M), "an Assumptions part"
    assert "](size.md" in text, "a link to the size card (size.md)"
    assert re.search(r"^## Worked example.*demo", text, re.M | re.I), "a worked example on the demo"
    assert re.search(r"^(## )?References?\b", text, re.M), "references"
