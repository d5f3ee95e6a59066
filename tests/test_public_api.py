"""The public API and the package layout (DEVELOPERS.md, "Layout").

* every public name imports: ``framebuckle.__all__``, ``framebuckle.solve``, the result objects,
  the errors, the PyVista accessor through the entry point declared in pyproject.toml, the
  command's ``main`` (console script ``framebuckle.cli:main`` and ``python -m framebuckle``);
* the stages form layers: a module imports only from its own stage or a lower one (no import
  points back up the flow, hence no cycle between stages), and no module is much over 400 lines.
"""

from __future__ import annotations

import ast
import importlib
import os
import subprocess
import sys
import tomllib
from pathlib import Path

import framebuckle as fb

ROOT = Path(__file__).resolve().parents[1]
PKG = ROOT / "plugin" / "framebuckle"

#: the stages, lowest first (DEVELOPERS.md, "Layout"); the package root's __init__, __main__,
#: cli and batch are the top
LAYERS = ["errors", "model", "mechanics", "solver", "io", "pipeline", "engineering", "pictures", "top"]
TOP_MODULES = {"__init__", "__main__", "cli", "batch"}
MAX_LINES = 450


def test_every_public_name_imports():
    assert set(fb.__all__) >= {"solve", "Result", "CaseResult", "CAUTIONS", "FrameBuckleError",
                               "InputError", "ModelError", "SolverError", "OutputError", "__version__"}
    for name in fb.__all__:
        assert getattr(fb, name) is not None, name
    from framebuckle import CaseResult, Result, solve
    from framebuckle.errors import (FrameBuckleError, InputError, ModelError, OutputError,
                                    SolverError)
    assert callable(solve) and solve is fb.solve
    assert solve.__module__ == "framebuckle.pipeline.api"
    assert isinstance(Result, type) and isinstance(CaseResult, type)
    for err in (InputError, ModelError, SolverError, OutputError):
        assert issubclass(err, FrameBuckleError)
    assert fb.InputError is InputError


def test_command_and_accessor_entry_points_import():
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    module, _, func = meta["scripts"]["framebuckle"].partition(":")
    main = getattr(importlib.import_module(module), func)
    assert callable(main)
    import framebuckle.__main__ as dunder_main
    assert dunder_main.main is main
    eps = meta["entry-points"]["pyvista.accessors"]
    assert list(eps) == ["buckle"]                       # the entry point's name is the API
    accessor = importlib.import_module(eps["buckle"])
    assert accessor.NAME == "buckle" and isinstance(accessor.Buckle, type)
    import pyvista as pv
    grid = pv.PolyData()
    assert isinstance(grid.buckle, accessor.Buckle)

def test_python_dash_m_runs_the_command():
    env = dict(os.environ)
    r = subprocess.run([sys.executable, "-m", "framebuckle", "--help"], capture_output=True,
                       text=True, env=env, timeout=120, cwd=ROOT)
    assert r.returncode == 0, r.stderr[-2000:]
    assert "solve" in r.stdout and "check" in r.stdout


def _modules():
    for p in sorted(PKG.rglob("*.py")):
        parts = p.relative_to(PKG).with_suffix("").parts
        yield p, parts


def _layer(parts) -> int:
    """Layer of a module given its path parts below the package."""
    if len(parts) == 1:
        name = parts[0]
        if name == "errors":
            return LAYERS.index("errors")
        assert name in TOP_MODULES, f"framebuckle/{name}.py: a new top-level module belongs in a stage"
        return LAYERS.index("top")
    assert parts[0] in LAYERS, f"framebuckle/{parts[0]}/ is not a stage listed in LAYERS"
    return LAYERS.index(parts[0])


def _targets(tree, parts):
    """Dotted targets (below framebuckle) of every import in a module, also function-local ones."""
    package = list(parts[:-1]) if parts[-1] != "__init__" else list(parts[:-1])
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[:len(package) - (node.level - 1)] if node.level > 1 else package
                assert node.level - 1 <= len(package), f"import beyond the package in {parts}"
                mod = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "framebuckle":
                mod = node.module.split(".")[1:]
            else:
                continue
            for a in node.names:
                yield node.lineno, mod, a.name
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.split(".")[0] == "framebuckle":
                    yield node.lineno, a.name.split(".")[1:], None


def _target_layer(mod, name) -> int | None:
    """Layer of an import target; None for the package root's own attributes."""
    if not mod:                                   # from framebuckle import X / from .. import X
        if name and (PKG / f"{name}.py").exists():
            return _layer((name,))
        if name and (PKG / name).is_dir():
            return _layer((name, "__init__"))
        return None                               # e.g. __version__: the root is imported first
    if (PKG / mod[0]).is_dir():
        return _layer((mod[0], "x"))
    return _layer((mod[0],))


def test_imports_point_only_to_the_same_or_a_lower_stage():
    wrong = []
    for p, parts in _modules():
        own = _layer(parts)
        tree = ast.parse(p.read_text(), filename=str(p))
        for line, mod, name in _targets(tree, parts):
            t = _target_layer(mod, name)
            if t is not None and t > own:
                wrong.append(f"{'/'.join(parts)}.py:{line} imports {'.'.join(mod) or name} "
                             f"({LAYERS[t]} above {LAYERS[own]})")
    assert not wrong, "imports that point up the flow:\n" + "\n".join(wrong)


def test_no_cycles_between_modules_of_a_stage():
    # modules of one stage may import each other, but not in a circle
    graph = {}
    for p, parts in _modules():
        tree = ast.parse(p.read_text(), filename=str(p))
        deps = set()
        for _, mod, name in _targets(tree, parts):
            if mod and (PKG.joinpath(*mod).with_suffix(".py")).exists():
                deps.add(tuple(mod))
            elif mod and name and PKG.joinpath(*mod, f"{name}.py").exists():
                deps.add(tuple(mod) + (name,))
        graph[parts] = deps - {parts}
    state = {}

    def visit(n, path):
        state[n] = 1
        for m in graph.get(n, ()):
            if state.get(m) == 1:
                raise AssertionError("import cycle: " + " -> ".join(".".join(x) for x in path + [n, m]))
            if m not in state:
                visit(m, path + [n])
        state[n] = 2

    for n in graph:
        if n not in state:
            visit(n, [])


def test_every_stage_says_what_it_does_and_modules_stay_small():
    for stage in LAYERS:
        if stage in ("errors", "top"):
            continue
        init = PKG / stage / "__init__.py"
        assert init.exists(), f"stage {stage} has no __init__.py"
        assert ast.get_docstring(ast.parse(init.read_text())), f"{stage}/__init__.py has no docstring"
    long = [f"{'/'.join(parts)}.py: {n} lines" for p, parts in _modules()
            if (n := len(p.read_text().splitlines())) > MAX_LINES]
    assert not long, "modules over %d lines (split them by concept):\n%s" % (MAX_LINES, "\n".join(long))


def test_the_layer_rule_catches_an_upward_import(tmp_path):
    # the check itself: a module of the model stage importing the solver is reported
    tree = ast.parse("from ..solver.solve import factorize\n")
    (line, mod, name), = _targets(tree, ("model", "refine"))
    assert _target_layer(mod, name) > _layer(("model", "refine"))
