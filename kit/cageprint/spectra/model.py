"""The one spectrum model every technique reads through."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ..errors import SpectrumError
from ..plain import plain as _plain

_UNITS: dict[str, str] = {"mass": "m/z", "ir": "cm-1", "raman": "cm-1", "nmr": "ppm",
                          "uvvis": "nm"}
#: technique key -> the x unit the kit works in (a read-only view; the technique
#: registry, :mod:`cageprint.techniques.registry`, adds the techniques it registers)
TECHNIQUES: Mapping[str, str] = MappingProxyType(_UNITS)


def register_technique(technique: str, x_unit: str) -> None:
    """Let spectra of a new technique be made and read (called by the technique registry)."""
    _UNITS[str(technique)] = str(x_unit)


def unregister_technique(technique: str) -> None:
    """Forget a technique added by :func:`register_technique` (the built-in ones stay)."""
    if technique not in _BUILT_IN:
        _UNITS.pop(technique, None)


_BUILT_IN = frozenset(_UNITS)


def _frozen_array(a, name: str) -> np.ndarray:
    arr = np.array(a, dtype=float, copy=True)
    if arr.ndim != 1:
        raise SpectrumError(f"{name} must be one-dimensional, got shape {arr.shape}")
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True, eq=False)
class Spectrum:
    """A measured (or synthetic) spectrum, immutable once made.

    Parameters
    ----------
    x, y : array_like
        Abscissa and ordinate, same length, finite.  Stored sorted by
        increasing ``x`` as read-only float64 arrays.
    technique : str
        One of ``TECHNIQUES``: ``"mass"``, ``"ir"``, ``"raman"``, ``"nmr"``
        (13C), ``"uvvis"``.
    x_unit : str, optional
        Defaults to the technique's unit (m/z, cm-1, ppm, nm).
    y_unit : str
        What y means (``"intensity"``, ``"absorbance"``, ``"transmittance"``...).
    kind : {"profile", "peaks"}
        ``"peaks"`` for centroided data or a peak list.
    widths : array_like, optional
        Peak widths (same units as x) when ``kind == "peaks"`` and known.
    meta : mapping
        Title, sample, solvent, ``observe_mhz``, origin file, ``sha256``,
        ``format`` and anything else the reader found.

    Examples
    --------
    >>> s = Spectrum([3.0, 1.0, 2.0], [0.3, 0.1, 0.2], technique="ir")
    >>> s.x.tolist(), s.x_unit
    ([1.0, 2.0, 3.0], 'cm-1')
    """

    x: np.ndarray
    y: np.ndarray
    technique: str
    x_unit: str = ""
    y_unit: str = "intensity"
    kind: str = "profile"
    widths: np.ndarray | None = None
    meta: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.technique not in TECHNIQUES:
            raise SpectrumError(
                f"technique {self.technique!r} is not one of {', '.join(TECHNIQUES)}"
            )
        if self.kind not in ("profile", "peaks"):
            raise SpectrumError(f"kind must be 'profile' or 'peaks', got {self.kind!r}")
        x = _frozen_array(self.x, "x")
        y = _frozen_array(self.y, "y")
        if x.shape != y.shape:
            raise SpectrumError(f"x has {x.size} points but y has {y.size}")
        if x.size == 0:
            raise SpectrumError("the spectrum has no points")
        if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
            raise SpectrumError("x and y must be finite (no NaN or inf)")
        w = None
        if self.widths is not None:
            w = _frozen_array(self.widths, "widths")
            if w.shape != x.shape:
                raise SpectrumError(f"widths has {w.size} values but x has {x.size}")
        order = np.argsort(x, kind="stable")
        if np.any(order != np.arange(x.size)):
            x, y = _frozen_array(x[order], "x"), _frozen_array(y[order], "y")
            if w is not None:
                w = _frozen_array(w[order], "widths")
        object.__setattr__(self, "x", x)
        object.__setattr__(self, "y", y)
        object.__setattr__(self, "widths", w)
        object.__setattr__(self, "x_unit", self.x_unit or TECHNIQUES[self.technique])
        object.__setattr__(self, "meta", MappingProxyType(dict(self.meta)))

    def __len__(self) -> int:
        return int(self.x.size)

    def to_dict(self) -> dict:
        """Plain, JSON-ready dict (lists and strings); inverse of :meth:`from_dict`.

        Examples
        --------
        >>> s = Spectrum([1.0, 2.0], [3.0, 4.0], technique="mass", meta={"title": "t"})
        >>> Spectrum.from_dict(s.to_dict()).to_dict() == s.to_dict()
        True
        """
        return {
            "x": self.x.tolist(), "y": self.y.tolist(), "technique": self.technique,
            "x_unit": self.x_unit, "y_unit": self.y_unit, "kind": self.kind,
            "widths": None if self.widths is None else self.widths.tolist(),
            "meta": _plain(self.meta),
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Spectrum:
        """Rebuild a spectrum from :meth:`to_dict` output."""
        try:
            return cls(
                d["x"], d["y"], technique=d["technique"], x_unit=d.get("x_unit", ""),
                y_unit=d.get("y_unit", "intensity"), kind=d.get("kind", "profile"),
                widths=d.get("widths"), meta=d.get("meta", {}),
            )
        except KeyError as exc:
            raise SpectrumError(f"spectrum dict lacks the key {exc.args[0]!r}") from None

    def replace(self, **changes: Any) -> Spectrum:
        """Return a copy with some fields changed (the original is untouched)."""
        fields: dict[str, Any] = dict(
            x=self.x, y=self.y, technique=self.technique, x_unit=self.x_unit,
            y_unit=self.y_unit, kind=self.kind, widths=self.widths, meta=dict(self.meta),
        )
        fields.update(changes)
        return Spectrum(**fields)
