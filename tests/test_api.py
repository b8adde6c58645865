"""The public API: names resolve, options use one glossary, every subpackage ships."""

from __future__ import annotations

import inspect
import re
from pathlib import Path

import evidence as ev

ROOT = Path(__file__).resolve().parents[1]

# Synonyms we avoid (house style: one glossary, docs/glossary.md).
FORBIDDEN = {"maxlag", "maxlags", "nlags", "nlag", "lag", "regression", "level", "sig",
             "significance", "trimming", "eps", "random_state", "rng", "start_year", "end_year",
             "period", "method_name", "kwargs"}


def test_all_names_resolve():
    for name in ev.__all__:
        assert hasattr(ev, name), name


def test_public_signatures_use_the_glossary():
    glossary = (ROOT / "docs" / "glossary.md").read_text(encoding="utf-8")
    for name in ev.__all__:
        obj = getattr(ev, name)
        if not callable(obj) or inspect.isclass(obj):
            continue
        for param in inspect.signature(obj).parameters.values():
            assert param.name not in FORBIDDEN, f"{name}({param.name}) uses a synonym"
            assert param.kind is not inspect.Parameter.VAR_KEYWORD, f"{name} takes **kwargs"
            assert f"`{param.name}`" in glossary, f"{name}({param.name}) missing from glossary"


def test_every_subpackage_is_listed_for_distribution():
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    listed = set(re.search(r"packages = \[(.*?)\]", text, re.S).group(1).replace('"', "").replace(
        " ", "").replace("\n", "").split(","))
    for init in (ROOT / "evidence").rglob("__init__.py"):
        dotted = ".".join(init.parent.relative_to(ROOT).parts)
        assert dotted in listed, f"{dotted} is not in pyproject's packages list"


def test_no_eval_or_pickle_in_package():
    for path in (ROOT / "evidence").rglob("*.py"):
        text = path.read_text(encoding="utf-8")
        assert not re.search(r"\beval\(|\bexec\(|import pickle|pickle\.load", text), path
