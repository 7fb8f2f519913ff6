"""The core type-checks with mypy (configured in pyproject.toml; the UI layer is left out)."""

from __future__ import annotations

import subprocess
import sys

import pytest


def test_core_type_checks(repo_root, tmp_path):
    # common practice, no source: a typed public API (py.typed) that a checker accepts
    pytest.importorskip("mypy", reason="mypy (test and dev extra) not installed")
    assert (repo_root / "kit" / "cageprint" / "py.typed").exists()
    out = subprocess.run(
        [sys.executable, "-m", "mypy", "--cache-dir", str(tmp_path / "mypy-cache"),
         "--no-error-summary", "--hide-error-context"],
        cwd=repo_root, capture_output=True, text=True, timeout=1200,
    )
    assert out.returncode == 0, out.stdout[-4000:] + out.stderr[-2000:]
