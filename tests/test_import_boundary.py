"""The architecture's import rules, read from the code itself.

* The analysis core never imports a UI library (checked in a fresh interpreter per module, so a
  dynamic import inside a module-level call is caught too); importing the package does not import the app.
* No import circles anywhere in ``workbench/`` — imports inside functions and ``TYPE_CHECKING`` blocks
  included — read with ``ast`` from every module.
* ``workbench.core`` never imports the command line, the performance command or the TUI, and
  ``workbench.core.model`` (the ground floor) imports nothing else of the project.
"""
import ast
import pkgutil
import subprocess
import sys
from pathlib import Path

import pytest

import workbench
import workbench.core

ROOT = Path(workbench.__file__).resolve().parent
CORE_MODULES = sorted(m.name for m in pkgutil.walk_packages(workbench.core.__path__, "workbench.core."))


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT.parent).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path, modules: set[str]) -> set[str]:
    """Every project module ``path`` imports anywhere in its body (functions and TYPE_CHECKING included)."""
    me = _module_name(path)
    package = me if path.name == "__init__.py" else me.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                up = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(up + ([node.module] if node.module else []))
            names = [f"{base}.{a.name}" if f"{base}.{a.name}" in modules else base for a in node.names]
        else:
            continue
        for name in names:
            # "import a.b.c" depends on a.b.c (and its packages, which hold no imports of their own here)
            while name and name not in modules:
                name = name.rpartition(".")[0]
            if name and name != me and name.startswith("workbench"):
                found.add(name)
    return found


def _graph() -> dict[str, set[str]]:
    files = {_module_name(p): p for p in ROOT.rglob("*.py")}
    modules = set(files)
    return {m: _imports(p, modules) for m, p in files.items()}


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan, 1972)."""
    index, low, stack, on, out, counter = {}, {}, [], set(), [], [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
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
                out.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_no_import_circles():
    assert _cycles(_graph()) == []


def test_the_circle_finder_finds_a_circle():
    """The check above can fail: a made-up two-module circle and a three-module one are found."""
    g = {"a": {"b"}, "b": {"a"}, "c": {"d"}, "d": {"e"}, "e": {"c"}, "f": {"a"}}
    assert sorted(_cycles(g)) == [["a", "b"], ["c", "d", "e"]]


def test_core_never_imports_the_front_ends():
    bad = {m: sorted(d for d in deps if not d.startswith("workbench.core") and d != "workbench")
           for m, deps in _graph().items() if m.startswith("workbench.core")}
    assert {m: d for m, d in bad.items() if d} == {}


def test_model_is_the_ground_floor():
    assert _graph()["workbench.core.model"] == set()


@pytest.mark.parametrize("module", CORE_MODULES + ["workbench.core", "workbench", "workbench.cli", "workbench.options"])
def test_core_module_imports_without_textual_or_rich(module):
    code = (f"import sys, importlib; importlib.import_module({module!r}); "
            "bad = [m for m in ('textual', 'rich', 'plotext', 'textual_plotext') if m in sys.modules]; "
            "print(','.join(bad)); sys.exit(1 if bad else 0)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, f"{module} pulled in {r.stdout.strip()} {r.stderr[-500:]}"
