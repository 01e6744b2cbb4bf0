"""Shared fixtures: small in-memory datasets (no files, no home directory)."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.core.model import Dataset, Layout


def make_dataset(values, labels=None, streams=None, path="memory.csv") -> Dataset:
    """A Dataset from an array (subgroups x streams, or 1-D for individuals)."""
    v = np.asarray(values, dtype=float)
    if v.ndim == 1:
        v = v[:, None]
    m, k = v.shape
    labels = np.array([str(x) for x in (labels if labels is not None else range(1, m + 1))])
    streams = tuple(streams) if streams is not None else (("x",) if k == 1 else tuple(f"S{j + 1}" for j in range(k)))
    kind = "individuals" if k == 1 else "wide"
    return Dataset(path=path, sha256="0" * 64, rows=m, size_bytes=0, layout=Layout(kind), labels=labels,
                   streams=streams, values=v)


def make_summary(n, mean, rng=None, sd=None, path="summary.csv") -> Dataset:
    m = len(mean)
    return Dataset(path=path, sha256="0" * 64, rows=m, size_bytes=0, layout=Layout("summary"),
                   labels=np.array([str(i + 1) for i in range(m)]), streams=(), values=None,
                   summary_n=np.asarray(n, float), summary_mean=np.asarray(mean, float),
                   summary_range=None if rng is None else np.asarray(rng, float),
                   summary_sd=None if sd is None else np.asarray(sd, float))


@pytest.fixture(autouse=True)
def _isolate_home(tmp_path, monkeypatch):
    """Tests never read the developer's home directory or author settings."""
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("WORKBENCH_AUTHOR", "tester@lab")
    monkeypatch.delenv("NO_COLOR", raising=False)
