"""The analysis core never imports a UI library; importing the package does not import the app."""
import pkgutil
import subprocess
import sys

import pytest

import workbench.core

CORE_MODULES = sorted(f"workbench.core.{m.name}" for m in pkgutil.iter_modules(workbench.core.__path__))


@pytest.mark.parametrize("module", CORE_MODULES + ["workbench", "workbench.cli"])
def test_core_module_imports_without_textual_or_rich(module):
    code = (f"import sys, importlib; importlib.import_module({module!r}); "
            "bad = [m for m in ('textual', 'rich', 'plotext', 'textual_plotext') if m in sys.modules]; "
            "print(','.join(bad)); sys.exit(1 if bad else 0)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, f"{module} pulled in {r.stdout.strip()} {r.stderr[-500:]}"
