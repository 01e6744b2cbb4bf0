"""The bundled demo scenario (invented data; see demo_data/README.md)."""
from __future__ import annotations

from pathlib import Path

from workbench.core.model import Settings, Spec

DEMO_DIR = Path(__file__).resolve().parent.parent / "demo_data"
"""The demo folder of the source tree (the project is installed in editable mode)."""
DEMO_FILE = DEMO_DIR / "filler_line3.csv"
"""The main demo: a six-head liquid filler, fill volume in mL."""

DEMO_NAME, DEMO_UNIT = "fill volume", "mL"
"""The demo's characteristic as demo_data/README.md states it (fill volume in mL)."""

# Specifications stated in demo_data/README.md for each demo file.
DEMO_SPECS: dict[str, Spec] = {
    "filler_line3.csv": Spec(lsl=497.0, usl=503.0, target=500.0),
    "filler_line3_long.csv": Spec(lsl=497.0, usl=503.0, target=500.0),
}


def demo_path() -> Path:
    if not DEMO_FILE.is_file():
        from workbench.core.model import WorkbenchError
        raise WorkbenchError(f"the bundled demo is missing ({DEMO_FILE}); install the project from its source "
                             "folder with 'pip install -e .' or run 'python demo_data/generate.py'")
    return DEMO_FILE


def demo_settings_for(path: str | Path) -> Settings | None:
    """Default settings (with the stated specification) when ``path`` is a bundled demo file."""
    p = Path(path).resolve()
    if p.parent == DEMO_DIR and p.name in DEMO_SPECS:
        return Settings(spec=DEMO_SPECS[p.name], name=DEMO_NAME, unit=DEMO_UNIT)
    return None
