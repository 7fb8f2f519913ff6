"""The top-level API: load_spectrum, candidates, assign, Session from ``import cageprint``."""

from __future__ import annotations

import subprocess
import sys

import pytest

import cageprint
from cageprint.techniques.thresholds import NmrSettings

# Fowler & Manolopoulos, An Atlas of Fullerenes (1995): C76 has 2 IPR isomers, D2 and Td
C76_GROUPS = ["D2", "Td"]


def _c76_d2_lines() -> bytes:
    """An invented 13C peak list with the 19x4 pattern of C76 D2 (positions invented)."""
    return "\n".join(f"{131.0 + 0.8 * i:.2f} 4.0" for i in range(19)).encode()


def test_candidates_and_names_at_the_top_level():
    cands = cageprint.candidates("C76", ipr=True)
    assert [c.point_group for c in cands] == C76_GROUPS
    assert all(isinstance(c, cageprint.Candidate) for c in cands)
    for name in ("load_spectrum", "candidates", "assign", "Session", "Spectrum", "Ranking"):
        assert name in cageprint.__all__


def test_assign_with_bytes_spectrum_settings_and_weights():
    nmr = cageprint.load_spectrum(_c76_d2_lines(), format="peaklist", technique="nmr")
    r = cageprint.assign("C76", nmr=nmr, settings={"nmr": {"integral_tol": 0.2}},
                         weights={"uvvis": 0.0})
    assert isinstance(r, cageprint.Ranking)
    assert [row.candidate.point_group for row in r.top()] == ["D2"]
    assert r.weights["uvvis"] == 0.0 and r.with_data == ("nmr",)
    same = cageprint.assign("C76", nmr=nmr, settings={"nmr": NmrSettings(integral_tol=0.2)},
                            weights={"uvvis": 0.0})
    assert same == r


def test_assign_takes_uv_and_uvvis_alike():
    uv = cageprint.Spectrum([330.0, 620.0], [1.0, 0.1], technique="uvvis", kind="peaks")
    a = cageprint.assign("C76", uv=uv)
    b = cageprint.assign("C76", uvvis=uv)
    assert a == b and a.with_data == ("uvvis",)
    with pytest.raises(cageprint.SessionError, match="give the UV-vis data once"):
        cageprint.assign("C76", uv=uv, uvvis=uv)
    with pytest.raises(cageprint.SessionError, match="unknown technique 'xrd' in inputs"):
        cageprint.assign("C76", inputs={"xrd": uv})
    with pytest.raises(cageprint.SettingsError, match=r"nmr.snr = -1: expected a number"):
        cageprint.assign("C76", settings={"nmr": {"snr": -1}})


def test_import_cageprint_stays_light():
    # common practice, no source: the core imports no UI package
    code = ("import sys, cageprint; "
            "print(sorted(m for m in ('plotly', 'ipywidgets', 'IPython', 'anywidget') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"
