"""The package's layering, read from the source with :mod:`ast`.

Two rules from the project's design: no import cycles among skyplan modules, and nothing
imports from a layer above it (inputs → engine → planning → render → api → cli).  Every import is
counted, at module level or inside a function.
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import skyplan

ROOT = Path(skyplan.__file__).parent

LAYERS = ("inputs", "names", "engine", "planning", "render", "api", "cli")
# layer of a module → the layers it must not import; "" is the shared modules at the top of
# the package (errors, notices, parallel, targetdata), which every layer may use
FORBIDDEN = {
    "": LAYERS,
    "inputs": ("engine", "planning", "render", "api", "cli"),
    "names": ("engine", "planning", "render", "api", "cli"),  # lookups are input, like a file
    "engine": ("planning", "render", "api", "cli"),
    "planning": ("render", "api", "cli"),
    "render": ("api", "cli"),
    "api": ("cli",),
}

# Known upward imports that remain, listed so that the test says exactly what is left
# (module, imported module): none today.
ALLOWED_UPWARD: set[tuple[str, str]] = set()

# Known cycles left (each a sorted tuple of the modules in it): none today.
ALLOWED_CYCLES: set[tuple[str, ...]] = set()


def module_name(path: Path) -> str:
    parts = path.relative_to(ROOT.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def imports() -> dict[str, set[str]]:
    """Each skyplan module → the skyplan modules it imports (resolved to module files)."""
    modules = {module_name(p): p for p in ROOT.rglob("*.py")}
    out: dict[str, set[str]] = {}
    for name, path in modules.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        found: set[str] = set()
        for node in ast.walk(ast.parse(path.read_text(), str(path))):
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    up = package.split(".")[: len(package.split(".")) - node.level + 1]
                    base = ".".join([*up, base] if base else up)
                targets = [f"{base}.{a.name}" for a in node.names]
            else:
                continue
            for t in targets:
                while t and t not in modules:  # ``from pkg import name`` → pkg
                    t = t.rpartition(".")[0]
                if t and t != name and t.startswith("skyplan"):
                    found.add(t)
        out[name] = found
    return out


def layer(module: str) -> str:
    """The layer a module belongs to; the entry point and the package's lazy public names
    (``skyplan.__main__``, ``skyplan``) are above all."""
    parts = module.split(".")
    if module in ("skyplan.__main__", "skyplan"):
        return "main"
    return parts[1] if len(parts) > 1 and parts[1] in LAYERS else ""


def upward_imports() -> set[tuple[str, str]]:
    bad = set()
    for mod, deps in imports().items():
        for dep in deps:
            if layer(dep) in FORBIDDEN.get(layer(mod), ()):
                bad.add((mod, dep))
    return bad


def cycles() -> set[tuple[str, ...]]:
    """Strongly connected components of more than one module (Tarjan 1972)."""
    graph = imports()
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    found: set[tuple[str, ...]] = set()

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.add(tuple(sorted(comp)))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_no_import_cycles() -> None:
    assert cycles() - ALLOWED_CYCLES == set()


def test_no_upward_imports() -> None:
    assert upward_imports() - ALLOWED_UPWARD == set()


def test_the_allow_lists_hold_only_what_is_still_there() -> None:
    # a violation fixed elsewhere must leave the lists too, so they never hide a new one
    assert ALLOWED_UPWARD <= upward_imports()
    assert ALLOWED_CYCLES <= cycles()


def test_the_checker_sees_a_cycle_and_an_upward_import(tmp_path, monkeypatch) -> None:
    # the checker itself, on a made-up package: a ↔ b cycle inside a function, engine → cli
    pkg = tmp_path / "skyplan"
    for sub in ("engine", "cli"):
        (pkg / sub).mkdir(parents=True)
        (pkg / sub / "__init__.py").write_text("")
    (pkg / "__init__.py").write_text("")
    (pkg / "engine" / "a.py").write_text("def f():\n    from skyplan.engine import b\n")
    (pkg / "engine" / "b.py").write_text("from . import a\nimport skyplan.cli.app\n")
    (pkg / "cli" / "app.py").write_text("")
    monkeypatch.setattr(sys.modules[__name__], "ROOT", pkg)
    assert cycles() == {("skyplan.engine.a", "skyplan.engine.b")}
    assert upward_imports() == {("skyplan.engine.b", "skyplan.cli.app")}
