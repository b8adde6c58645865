"""Sphinx configuration for the evidence documentation.

Sphinx with numpydoc renders the API reference from the docstrings (the package writes numpydoc);
myst-parser reads the Markdown pages (user guide, methods, size card, glossary) as they are, with
``$...$`` and ``$$...$$`` math rendered by MathJax. Build: ``sphinx-build -W -b html docs docs/_build``.
"""

from __future__ import annotations

import evidence

project = "evidence"
author = "the evidence developers"
copyright = "the evidence developers"  # noqa: A001 - Sphinx's name
release = evidence.__version__
version = release

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "sphinx.ext.mathjax",
    "sphinx.ext.viewcode",
    "numpydoc",
    "myst_parser",
]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
exclude_patterns = ["_build", "Thumbs.db", ".DS_Store"]
myst_enable_extensions = ["dollarmath", "amsmath", "deflist"]
myst_heading_anchors = 3
autosummary_generate = True
autodoc_typehints = "none"  # numpydoc writes the types from the docstrings
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_validation_checks: set[str] = set()
suppress_warnings = ["myst.xref_missing"]
html_theme = "pydata_sphinx_theme"
html_title = "evidence"
html_static_path: list[str] = []
html_theme_options = {"navigation_with_keys": False, "show_toc_level": 2}
html_last_updated_fmt = None  # pages carry no build date


def _constant_doc(app, what, name, obj, options, lines):  # noqa: ARG001 - Sphinx's signature
    """A re-exported constant shows the ``#:`` comment above its definition, not its type's docstring.

    Autodoc reads ``#:`` comments only from the module a name is documented under (``evidence``
    for ``evidence.TREND_TESTS``); the definitions live in the submodules.
    """
    if what not in ("data", "attribute") or getattr(obj, "__doc__", None) != type(obj).__doc__:
        return
    import sys

    from sphinx.pycode import ModuleAnalyzer

    attr = name.rsplit(".", 1)[1]
    for modname, module in sorted(sys.modules.items()):
        if not modname.startswith("evidence") or getattr(module, attr, None) is not obj:
            continue
        try:
            comment = ModuleAnalyzer.for_module(modname).find_attr_docs().get(("", attr))
        except Exception:  # noqa: BLE001 - a module without source: try the next
            continue
        if comment:
            lines[:] = list(comment)
            return
    lines[:] = []


def setup(app):
    app.connect("autodoc-process-docstring", _constant_doc)
