"""Cage stability: indices from the graph, computed energies, and a stability prior."""

from __future__ import annotations

from .indices import (
    INDEX_INFO,
    StabilityIndices,
    formal_charge,
    pentagon_counts,
    stability_indices,
    stability_indices_at,
)

__all__ = [
    "INDEX_INFO",
    "StabilityIndices",
    "formal_charge",
    "pentagon_counts",
    "stability_indices",
    "stability_indices_at",
]
