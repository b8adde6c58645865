"""The public API: names resolve, options use one glossary, every subpackage ships, the layers hold.

"One meaning, one name": the synonyms we retired fail here, as do seeds and trends off the shared
defaults, panel methods taking ``y``/``x`` column names, ``*_test`` functions that return anything
but a ``TestResult`` or a ``TestGroupResult``, a module that imports the package face, and a module
that takes another module's private helper.
"""

from __future__ import annotations

import ast
import importlib.util
import inspect
import re
import typing
from pathlib import Path

import pytest

import evidence as ev
from evidence._typing import DEFAULT_SEED, TRENDS
from evidence.results import TestGroupResult, TestResult

ROOT = Path(__file__).resolve().parents[1]

# Synonyms we avoid (house style: one glossary, docs/glossary.md), and the names retired for
# hac_lags, reps, executor and pressure.
FORBIDDEN = {"maxlag", "maxlags", "nlags", "nlag", "lag", "regression", "level", "sig",
             "significance", "trimming", "eps", "random_state", "rng", "start_year", "end_year",
             "period", "method_name", "kwargs",
             "bandwidth", "replications", "bootstrap", "bootstrap_reps", "backend", "jobs",
             "scheduler", "emissions"}

def _cases(check: str, items: list[tuple[str, str]]) -> list:
    """One ``pytest.param`` per (name, module), named by the public name."""
    return [pytest.param(name, id=name) for name, _module in items]


def _public_callables() -> list[tuple[str, str]]:
    out = []
    for name in ev.__all__:
        obj = getattr(ev, name)
        if callable(obj) and not (inspect.isclass(obj) and issubclass(obj, Exception)):
            try:
                inspect.signature(obj)
            except (TypeError, ValueError):
                continue
            out.append((name, getattr(obj, "__module__", "")))
    return out


PUBLIC = _public_callables()


def _parameters(name: str) -> list[inspect.Parameter]:
    return list(inspect.signature(getattr(ev, name)).parameters.values())


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
            assert param.kind is not inspect.Parameter.VAR_KEYWORD, f"{name} takes **kwargs"
            assert f"`{param.name}`" in glossary, f"{name}({param.name}) missing from glossary"


@pytest.mark.parametrize("name", _cases("synonyms", PUBLIC))
def test_one_meaning_one_name(name):
    used = [p.name for p in _parameters(name) if p.name in FORBIDDEN]
    assert not used, f"{name}({', '.join(used)}) uses a retired or avoided synonym"


def _with_default(parameter: str) -> list[tuple[str, str]]:
    return [c for c in PUBLIC if any(p.name == parameter and p.default is not inspect.Parameter.empty
                                     for p in _parameters(c[0]))]


@pytest.mark.parametrize("name", _cases("seed", _with_default("seed")))
def test_every_seed_defaults_to_the_shared_seed(name):
    seed = next(p for p in _parameters(name) if p.name == "seed")
    assert seed.default == DEFAULT_SEED, f"{name}(seed={seed.default!r})"


@pytest.mark.parametrize("name", _cases("trend", _with_default("trend")))
def test_every_trend_default_is_a_trend(name):
    trend = next(p for p in _parameters(name) if p.name == "trend")
    assert trend.default in TRENDS, f"{name}(trend={trend.default!r}); use one of {TRENDS}"


@pytest.mark.parametrize("name", _cases("panel_columns", [c for c in PUBLIC if _parameters(
    c[0]) and _parameters(c[0])[0].name == "panel"]))
def test_panel_methods_name_columns_not_y_and_x(name):
    names = {p.name for p in _parameters(name)}
    assert not names & {"y", "x"}, (f"{name} takes y/x column names; panel methods take "
                                    "column, or dependent and regressors")


@pytest.mark.parametrize("name", [n for n in ev.__all__ if n.endswith("_test")])
def test_every_test_returns_a_test_result(name):
    returned = typing.get_type_hints(getattr(ev, name)).get("return")
    assert inspect.isclass(returned) and issubclass(returned, (TestResult, TestGroupResult)), (
        f"{name} is annotated to return {returned!r}")


# ------------------------------------------------------------------------------------ layers
def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _is_module(dotted: str) -> bool:
    try:
        return importlib.util.find_spec(dotted) is not None
    except (ImportError, ValueError):
        return False


MODULES = {_module_name(p): p for p in sorted((ROOT / "evidence").rglob("*.py"))}


def _private_class_members() -> dict[str, set[str]]:
    """``_name`` defined in a class body, by module (methods and class attributes)."""
    out: dict[str, set[str]] = {}
    for module, path in MODULES.items():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ClassDef):
                for item in node.body:
                    names = ([item.name] if isinstance(item, (ast.FunctionDef, ast.AsyncFunctionDef))
                             else [t.id for t in getattr(item, "targets", []) if isinstance(t, ast.Name)])
                    out.setdefault(module, set()).update(
                        n for n in names if n.startswith("_") and not n.startswith("__"))
    return out


CLASS_PRIVATES = _private_class_members()


def _layering_problems(module: str, path: Path) -> list[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    problems, aliases, defined = [], {}, set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name == "evidence":
                    problems.append("imports the package face (import evidence)")
                elif alias.name.startswith("evidence."):
                    aliases[alias.asname or alias.name] = alias.name
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module and (
                node.module == "evidence" or node.module.startswith("evidence.")):
            for alias in node.names:
                full = f"{node.module}.{alias.name}"
                if _is_module(full):
                    aliases[alias.asname or alias.name] = full
                elif node.module == "evidence":
                    problems.append(f"imports {alias.name} from the package face")
                elif alias.name.startswith("_") and not alias.name.startswith("__"):
                    problems.append(f"takes the private {full}")
        elif isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
            defined.add(node.name)
        elif isinstance(node, ast.Name) and isinstance(node.ctx, ast.Store):
            defined.add(node.id)
        elif isinstance(node, ast.Attribute) and isinstance(node.ctx, ast.Store):
            defined.add(node.attr)
    others = set().union(*(v for k, v in CLASS_PRIVATES.items() if k != module))
    for node in ast.walk(tree):
        if not (isinstance(node, ast.Attribute) and node.attr.startswith("_")
                and not node.attr.startswith("__")):
            continue
        base = node.value
        if isinstance(base, ast.Name) and base.id in aliases:
            problems.append(f"takes the private {aliases[base.id]}.{node.attr}")
        elif (not (isinstance(base, ast.Name) and base.id in ("self", "cls"))
              and node.attr in others and node.attr not in defined):
            problems.append(f"uses another module's private member .{node.attr} (line {node.lineno})")
    return problems


@pytest.mark.parametrize("module", _cases("layering", [(m, m) for m in MODULES]))
def test_layers_hold(module):
    problems = _layering_problems(module, MODULES[module])
    assert not problems, f"{module}: " + "; ".join(problems)


def test_layering_check_finds_what_it_should(tmp_path):
    bad = tmp_path / "bad.py"
    bad.write_text("import evidence as ev\nfrom evidence.indicators import _default_window\n"
                   "from evidence.breaks import tests as bt\nx = bt._long_run(1)\n"
                   "def f(panel):\n    return panel._with('a', 1)\n")
    problems = _layering_problems("evidence.bad", bad)
    assert any("face" in p for p in problems)
    assert any("evidence.indicators._default_window" in p for p in problems)
    assert any("evidence.breaks.tests._long_run" in p for p in problems)
    assert any("._with" in p for p in problems)


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
