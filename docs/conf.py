"""Sphinx configuration of the framebuckle documentation.

Build (one command, no display needed)::

    python -m pip install -e ".[docs]" && python -m sphinx -W --keep-going -b html docs docs/_build/html
"""

from __future__ import annotations

import contextlib
import io
import os
import runpy
import sys
from pathlib import Path

DOCS = Path(__file__).resolve().parent
ROOT = DOCS.parent
PLUGIN = ROOT / "plugin"
GENERATED = DOCS / "_generated"

# document this checkout (also in the gallery's subprocesses), drawn off-screen
sys.path.insert(0, str(PLUGIN))
os.environ["PYTHONPATH"] = os.pathsep.join([str(PLUGIN)] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p])
os.environ.setdefault("PYVISTA_OFF_SCREEN", "true")
os.environ.setdefault("MPLBACKEND", "Agg")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ["FRAMEBUCKLE_PROGRESS"] = "0"

import framebuckle  # noqa: E402

project = "framebuckle"
author = "the framebuckle developers"
copyright = "the framebuckle developers"
release = framebuckle.__version__
version = release

extensions = [
    "myst_parser",
    "sphinx.ext.autodoc",
    "numpydoc",
    "sphinx_gallery.gen_gallery",
]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
root_doc = "index"
exclude_patterns = ["_build", "_generated", "Thumbs.db", ".DS_Store", "auto_examples/*.ipynb",
                    "auto_examples/*.py", "auto_examples/*.zip"]

# Markdown (MyST): README-style pages with GitHub heading anchors (`page.md#a-heading`)
myst_heading_anchors = 3

# API reference: numpydoc docstrings, validated (a public function without a docstring, an
# undocumented parameter or a missing Returns section is a warning, so an error under -W)
autodoc_default_options = {"member-order": "bysource"}
autodoc_typehints = "none"
numpydoc_show_class_members = False
numpydoc_xref_param_type = False
numpydoc_validation_checks = {"GL08", "PR01", "PR02", "RT01", "SS01", "SS03"}

# gallery of runnable examples on the shipped samples
GALLERY_EXTRA = GENERATED / "extra"          # copied into the site root (the HTML report)
(GALLERY_EXTRA / "reports").mkdir(parents=True, exist_ok=True)
os.environ["FRAMEBUCKLE_GALLERY_REPORTS"] = str(GALLERY_EXTRA / "reports")
# small pictures in the gallery keep the build quick (CI builds it on every run)
os.environ.setdefault("FRAMEBUCKLE_GALLERY_WINDOW", "800x600")
sphinx_gallery_conf = {
    "examples_dirs": str(ROOT / "examples" / "gallery"),
    "gallery_dirs": "auto_examples",
    "filename_pattern": r"/plot_",
    "image_scrapers": ("matplotlib",),
    "download_all_examples": False,
    "remove_config_comments": True,
    "within_subsection_order": "FileNameSortKey",
    "min_reported_time": 1,
}
html_extra_path = [str(GALLERY_EXTRA)]

html_theme = "pydata_sphinx_theme"
html_title = f"framebuckle {release}"
html_theme_options = {
    "navigation_with_keys": False,
    "show_toc_level": 2,
    "footer_start": ["copyright"],
    "footer_end": ["sphinx-version"],
}
html_context = {"default_mode": "light"}
html_show_sourcelink = False


# ---------------------------------------------------------------- the command line, generated
def _cli_help(args: list[str]) -> str:
    """`framebuckle ARGS --help`, run in-process through the real parser (cannot go stale)."""
    out = io.StringIO()
    argv, columns = sys.argv, os.environ.get("COLUMNS")
    sys.argv = ["framebuckle", *args, "--help"]
    os.environ["COLUMNS"] = "100"
    try:
        with contextlib.redirect_stdout(out), contextlib.suppress(SystemExit):
            runpy.run_module("framebuckle", run_name="__main__", alter_sys=False)
    finally:
        sys.argv = argv
        if columns is None:
            os.environ.pop("COLUMNS", None)
        else:
            os.environ["COLUMNS"] = columns
    text = out.getvalue()
    if not text.startswith("usage: framebuckle"):
        raise RuntimeError(f"`framebuckle {' '.join(args)} --help` printed no usage:\n{text}")
    return text


CLI_COMMANDS = ["solve", "check", "render", "view", "report", "batch"]


def _write_cli_help():
    (GENERATED / "cli").mkdir(parents=True, exist_ok=True)
    for name, args in [("framebuckle", [])] + [(c, [c]) for c in CLI_COMMANDS]:
        path = GENERATED / "cli" / f"{name}.txt"
        text = _cli_help(args)
        if not path.exists() or path.read_text() != text:
            path.write_text(text)


_write_cli_help()


# ---------------------------------------------------------------- API coverage
def _dataclass_fields() -> set:
    import dataclasses
    return {f.name for cls in (framebuckle.Result, framebuckle.CaseResult) for f in dataclasses.fields(cls)}


def _skip_dataclass_fields(app, what, name, obj, skip, options):
    """Dataclass fields are described in their class's Attributes section, not one by one."""
    if what == "class" and name in _dataclass_fields():
        return True
    return None


def _check_public_api(app, env):
    """Every name in ``framebuckle.__all__`` must be in the API reference."""
    from sphinx.util import logging
    documented = set(env.get_domain("py").objects)
    for name in framebuckle.__all__:
        if name.startswith("__"):
            continue
        if f"framebuckle.{name}" not in documented:
            logging.getLogger(__name__).warning(
                f"public name framebuckle.{name} (in framebuckle.__all__) is not in the API reference (docs/api.rst)")


def setup(app):
    app.connect("autodoc-skip-member", _skip_dataclass_fields)
    app.connect("env-check-consistency", _check_public_api)
