"""Every worker in the TUI names its own description.

Without ``description=``, Textual's ``@work`` builds one from ``repr()`` of every argument on every call
(textual/_work_decorator.py): a Snapshot of a 10-million-reading dataset took about a second to repr on the
main thread each time the charts were redrawn.  This test reads the source (ast), so a new worker written
without a description fails here rather than in a slow session.  Kills: a ``@work`` decorator added
without ``description``.
"""
import ast
from pathlib import Path

import workbench.tui

TUI = Path(workbench.tui.__file__).parent


def _work_decorators():
    for path in sorted(TUI.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for dec in node.decorator_list:
                    call = dec if isinstance(dec, ast.Call) else None
                    target = call.func if call else dec
                    if isinstance(target, ast.Name) and target.id == "work":
                        yield path.relative_to(TUI), node.name, call


def test_every_tui_worker_has_a_description():
    found = list(_work_decorators())
    assert len(found) >= 10  # the scan sees the workers (bench charts, open, write, fit, ...)
    missing = [f"{p}:{name}" for p, name, call in found
               if call is None or not any(k.arg == "description" for k in call.keywords)]
    assert not missing, f"@work without description= (its arguments would be repr'd on every call): {missing}"
