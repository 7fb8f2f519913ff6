"""Shared pytest fixtures for cageprint."""

from __future__ import annotations

import os
import pathlib

# one BLAS thread: the many small eigenproblems of cage fingerprints run ~10x faster
# than with a thread pool fighting over a shared 2-core machine (measured here)
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import pytest  # noqa: E402

ROOT = pathlib.Path(__file__).resolve().parents[1]


@pytest.fixture(scope="session")
def repo_root() -> pathlib.Path:
    return ROOT
