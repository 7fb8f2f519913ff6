"""The saved-session schema (``cageprint-session/1``), checked whole before anything is built.

A session file is data from outside: every field is checked for type, range and
size here, so a damaged or crafted file ends in one
:class:`~cageprint.errors.SessionError` naming the file and the field (never a
raw KeyError, TypeError or RecursionError, never gigabytes allocated for a
huge ``n``), and a spectrum can only sit in the slot of its own technique.

Examples
--------
>>> validate_session({"format": "cageprint-session/1", "spectra": {}}, "s.json")
>>> validate_session({"format": "cageprint-session/1", "candidates": [{"n": 10**9}]}, "s.json")
Traceback (most recent call last):
...
cageprint.errors.SessionError: s.json: candidates[0].n: expected a whole number from 20 to ...
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from .errors import SessionError
from .spectra.model import TECHNIQUES
from .spectra.readers._common import MAX_POINTS, PHYSICAL_X_RANGE

__all__ = ["validate_session", "SESSION_FORMATS", "MAX_CAGE_ATOMS", "MAX_CANDIDATES",
           "MAX_DEPTH", "MAX_TEXT"]

#: the session formats this kit reads
SESSION_FORMATS = ("cageprint-session/1",)
#: the largest cage a session may name (atoms)
MAX_CAGE_ATOMS = 10_000
#: the most candidates a session may hold
MAX_CANDIDATES = 1_000_000
#: the deepest nesting of lists and mappings in a session
MAX_DEPTH = 32
#: the longest text field (characters)
MAX_TEXT = 10_000
_TOP_KEYS = {"format", "sample", "formula", "cage_charge", "ipr", "thresholds", "weights",
             "candidates", "spectra", "data"}


class _Check:
    def __init__(self, where: str):
        self.where = where

    def fail(self, path: str, expected: str, value: Any = None) -> SessionError:
        found = type(value).__name__ if not isinstance(value, (int, float, str)) else \
            repr(value)[:60]
        return SessionError(f"{self.where}: {path}: expected {expected}; found {found}")

    def mapping(self, value, path: str) -> Mapping:
        if not isinstance(value, Mapping):
            raise self.fail(path, "a mapping", value)
        return value

    def seq(self, value, path: str, limit: int) -> list:
        if not isinstance(value, list):
            raise self.fail(path, "a list", value)
        if len(value) > limit:
            raise SessionError(f"{self.where}: {path}: {len(value)} entries is more than "
                               f"{limit}")
        return value

    def text(self, value, path: str, none_ok: bool = True) -> None:
        if value is None and none_ok:
            return
        if not isinstance(value, str) or len(value) > MAX_TEXT:
            raise self.fail(path, f"text of at most {MAX_TEXT} characters", value)

    def whole(self, value, path: str, lo: int, hi: int, none_ok: bool = False) -> None:
        if value is None and none_ok:
            return
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            raise self.fail(path, f"a whole number from {lo} to {hi}", value)

    def number(self, value, path: str, none_ok: bool = False) -> None:
        if value is None and none_ok:
            return
        if isinstance(value, bool) or not isinstance(value, (int, float)) or \
                not math.isfinite(value):
            raise self.fail(path, "a finite number", value)

    def numbers(self, value, path: str, limit: int) -> list:
        seq = self.seq(value, path, limit)
        for i, v in enumerate(seq):
            self.number(v, f"{path}[{i}]")
        return seq


def _depth(value: Any) -> int:
    """Nesting depth of lists and mappings, without recursion."""
    deepest, stack = 0, [(value, 1)]
    while stack:
        v, d = stack.pop()
        if isinstance(v, Mapping):
            children = list(v.values())
        elif isinstance(v, list):
            children = v
        else:
            continue
        deepest = max(deepest, d)
        if deepest > MAX_DEPTH:
            return deepest
        stack.extend((c, d + 1) for c in children)
    return deepest


def _candidate(c: _Check, d, path: str) -> None:
    c.mapping(d, path)
    for key in ("formula", "point_group", "label"):
        c.text(d.get(key), f"{path}.{key}")
    c.whole(d.get("n"), f"{path}.n", 20, MAX_CAGE_ATOMS)
    n = d["n"]
    c.whole(d.get("isomer"), f"{path}.isomer", 0, 10**12)
    c.whole(d.get("cage_charge", 0), f"{path}.cage_charge", -50, 50)
    for key in ("ir_count", "raman_count"):
        c.whole(d.get(key), f"{path}.{key}", 0, 3 * n, none_ok=True)
    c.number(d.get("gap_beta"), f"{path}.gap_beta", none_ok=True)
    c.numbers(d.get("transitions_beta", []), f"{path}.transitions_beta", 3 * n)
    sizes = c.seq(d.get("nmr_sizes", []), f"{path}.nmr_sizes", n)
    for i, v in enumerate(sizes):
        c.whole(v, f"{path}.nmr_sizes[{i}]", 1, n)
    if sum(sizes) > n:
        raise SessionError(f"{c.where}: {path}.nmr_sizes: orbit sizes sum to {sum(sizes)}, "
                           f"more than n={n}")
    spiral = c.seq(d.get("spiral", []), f"{path}.spiral", 12)
    for i, v in enumerate(spiral):
        c.whole(v, f"{path}.spiral[{i}]", 1, n // 2 + 2)
    if d.get("extra") is not None:
        c.mapping(d["extra"], f"{path}.extra")


def _spectrum(c: _Check, t: str, d, path: str) -> None:
    c.mapping(d, path)
    if d.get("technique") != t:
        raise SessionError(f"{c.where}: {path}: a {d.get('technique')!r} spectrum in the "
                           f"{t!r} slot; each spectrum must sit in its own technique's slot")
    x = c.numbers(d.get("x"), f"{path}.x", MAX_POINTS)
    y = c.numbers(d.get("y"), f"{path}.y", MAX_POINTS)
    if len(x) != len(y) or not x:
        raise SessionError(f"{c.where}: {path}: x has {len(x)} values and y {len(y)}; "
                           "expected the same number, at least one")
    if d.get("widths") is not None and len(c.numbers(d["widths"], f"{path}.widths",
                                                     MAX_POINTS)) != len(x):
        raise SessionError(f"{c.where}: {path}.widths: expected {len(x)} values")
    if d.get("kind", "profile") not in ("profile", "peaks"):
        raise c.fail(f"{path}.kind", "'profile' or 'peaks'", d.get("kind"))
    if d.get("x_unit", TECHNIQUES[t]) not in ("", TECHNIQUES[t]):
        raise c.fail(f"{path}.x_unit", f"{TECHNIQUES[t]!r}", d.get("x_unit"))
    lo, hi = PHYSICAL_X_RANGE.get(t, (-math.inf, math.inf))
    if min(x) < lo or max(x) > hi:
        raise SessionError(f"{c.where}: {path}.x: values from {min(x):g} to {max(x):g} lie "
                           f"outside the physical range {lo:g} to {hi:g} {TECHNIQUES[t]}")
    for key in ("y_unit", "source"):
        c.text(d.get(key), f"{path}.{key}")
    if d.get("meta") is not None:
        c.mapping(d["meta"], f"{path}.meta")


def validate_session(d: Any, where: str = "session record") -> None:
    """Check a session mapping against the schema; raise SessionError naming the field."""
    c = _Check(where)
    c.mapping(d, "the file")
    if d.get("format") not in SESSION_FORMATS:
        raise SessionError(f"{where}: expected format {SESSION_FORMATS[-1]!r}; got "
                           f"{str(d.get('format'))[:60]!r}")
    unknown = sorted(set(d) - _TOP_KEYS)
    if unknown:
        raise SessionError(f"{where}: unknown field {unknown[0]!r}; known: "
                           f"{', '.join(sorted(_TOP_KEYS))}")
    if _depth(d) > MAX_DEPTH:
        raise SessionError(f"{where}: nested more than {MAX_DEPTH} levels deep")
    c.text(d.get("sample"), "sample")
    c.text(d.get("formula"), "formula")
    c.whole(d.get("cage_charge"), "cage_charge", -50, 50, none_ok=True)
    if d.get("ipr") not in (None, True, False):
        raise c.fail("ipr", "true, false or null", d.get("ipr"))
    for key in ("thresholds", "weights", "spectra", "data"):
        c.mapping(d.get(key, {}), key)
    for t, w in d.get("weights", {}).items():
        c.number(w, f"weights.{t}")
        if w < 0:
            raise c.fail(f"weights.{t}", "a number >= 0", w)
    for t, th in d.get("thresholds", {}).items():
        c.mapping(th, f"thresholds.{t}")
    for i, cand in enumerate(c.seq(d.get("candidates", []), "candidates", MAX_CANDIDATES)):
        _candidate(c, cand, f"candidates[{i}]")
    for t, sd in d.get("spectra", {}).items():
        if t not in TECHNIQUES:
            raise c.fail(f"spectra.{str(t)[:40]}", f"one of {', '.join(TECHNIQUES)}", t)
        _spectrum(c, t, sd, f"spectra.{t}")
    for t, dd in d.get("data", {}).items():
        c.mapping(dd, f"data.{t}")
        if "value" not in dd:
            raise c.fail(f"data.{t}.value", "a value", None)
