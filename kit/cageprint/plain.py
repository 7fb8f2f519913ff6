"""JSON-ready copies of nested results: one helper every record's ``to_dict`` uses."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from types import MappingProxyType
from typing import Any

import numpy as np

__all__ = ["plain", "freeze_fields"]


def plain(value: Any) -> Any:
    """Nested mappings, sequences and numpy values as plain Python, ready for JSON.

    Tuples become lists, numpy arrays lists, numpy scalars Python numbers,
    mapping proxies dicts; a non-finite float becomes None (JSON has no inf).

    Examples
    --------
    >>> plain({"a": (1, np.float64(2.5)), "b": np.arange(2), "c": float("inf")})
    {'a': [1, 2.5], 'b': [0, 1], 'c': None}
    """
    if isinstance(value, Mapping):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return plain(value.tolist())
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


_FREEZE: dict[str, Callable[[Any], Any]] = {
    "excluded": lambda v: tuple(MappingProxyType(dict(e)) for e in v),
    "region": lambda v: (float(v[0]), float(v[1])),
    "thresholds": lambda v: MappingProxyType(dict(v)),
    "diagnostics": lambda v: MappingProxyType(dict(v)),
}


def freeze_fields(record: Any, *names: str) -> None:
    """Settle the fields observation records share, in a frozen dataclass's ``__post_init__``.

    ``excluded`` becomes a tuple of read-only mappings, ``region`` a pair of
    floats, ``thresholds`` and ``diagnostics`` read-only mappings.
    """
    for name in names:
        object.__setattr__(record, name, _FREEZE[name](getattr(record, name)))

