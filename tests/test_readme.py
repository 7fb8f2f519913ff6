"""The README's Python quickstart runs as written (a doctest over README.md)."""

from __future__ import annotations

import doctest


def test_readme_quickstart_runs(repo_root):
    # common practice, no source: documentation examples are executed, so they cannot drift
    result = doctest.testfile(str(repo_root / "README.md"), module_relative=False,
                              optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.attempted >= 8
    assert result.failed == 0
