"""Shared checks for the data-source tests: the same report from another container of the same data."""
from __future__ import annotations

import json
import math

from workbench.core.analysis import analyse
from workbench.core.model import Settings, Spec
from workbench.core.report import render

PG_PASSWORD = "Fill-Head-7#q"
"""The PostgreSQL test role's password: every test that prints or writes something checks it never appears."""

DEMO_SPEC = Settings(spec=Spec(lsl=497.0, usl=503.0))
"""The demo's stated specification (demo_data/README.md: 497.0–503.0 mL)."""

_SKIP = {"source", "notices", "layout", "characteristic"}  # the name comes from the container (a header or a column)


def report_of(dataset, settings: Settings | None = None) -> dict:
    """The JSON report of an analysis with every point, without the parts that name the container.

    Measured data get the demo's specification (so capability is compared too); counts none."""
    if settings is None:
        settings = Settings() if dataset.counts is not None else DEMO_SPEC
    a = analyse(dataset, settings)
    obj = json.loads(render(a, "json", with_values=True))
    return {k: v for k, v in obj.items() if k not in _SKIP}


def assert_same(a, b, where: str = "report", rel: float = 1e-12) -> None:
    """Equal structure; numbers equal to ``rel`` (relative, absolute near zero)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and set(a) == set(b), f"{where}: keys {sorted(set(a) ^ set(b))}"
        for k in a:
            assert_same(a[k], b[k], f"{where}.{k}", rel)
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), f"{where}: lengths differ"
        for i, (x, y) in enumerate(zip(a, b)):
            assert_same(x, y, f"{where}[{i}]", rel)
    elif isinstance(a, float) and isinstance(b, (int, float)) and not isinstance(b, bool):
        assert math.isclose(a, b, rel_tol=rel, abs_tol=rel), f"{where}: {a!r} != {b!r}"
    else:
        assert a == b, f"{where}: {a!r} != {b!r}"


def without_context(dataset):
    """The dataset with its context columns left out (for a source that reads only the mapped columns)."""
    import dataclasses
    return dataclasses.replace(dataset, extras={}, extra_sets={})
