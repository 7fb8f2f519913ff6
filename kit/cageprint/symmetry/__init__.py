"""Symmetry of carbon cages and the fingerprints it predicts.

Automorphisms from the rotation system (:mod:`.automorphisms`), a faithful
symmetric 3D model (:mod:`.geometry`), point groups and character tables
(:mod:`.pointgroup`, :mod:`.tables`), reductions (:mod:`.reduce`), carbon and
bond orbits (:mod:`.orbits`), Hückel levels (:mod:`.huckel`) and the cached
per-cage :class:`Fingerprint` (:mod:`.fingerprint`).

Examples
--------
>>> from cageprint.symmetry import fingerprint
>>> fingerprint([[1, 2, 3], [0, 3, 2], [0, 1, 3], [0, 2, 1]]).point_group
'Td'
"""

from __future__ import annotations

import importlib

from .automorphisms import AutomorphismGroup, automorphisms
from .fingerprint import (
    CageSymmetry,
    ElectronicPrediction,
    Fingerprint,
    NmrPrediction,
    VibrationalPrediction,
    cage_symmetry,
    clear_caches,
    fingerprint,
    point_group_from_geometry,
    predict_electronic,
    predict_nmr,
    predict_vibrational,
    symmetric_geometry,
)
from .geometry import GEOMETRY_TOL, SymmetricGeometry, to_xyz

# names of the point-group / table / reduction modules, imported on first use
_LAZY = {
    "character_table": "tables",
    "CharacterTable": "tables",
    "POINT_GROUPS": "tables",
    "identify_point_group": "pointgroup",
    "PointGroupMatch": "pointgroup",
    "SYMMETRY_TOL": "pointgroup",
    "reduce_representation": "reduce",
    "gamma_3n": "reduce",
    "vibrational_analysis": "reduce",
    "direct_product": "reduce",
    "transition_allowed": "reduce",
    "cartesian_character": "reduce",
    "class_characters": "reduce",
    "representation_characters": "reduce",
    "VibrationalAnalysis": "reduce",
    "REDUCE_TOL": "reduce",
}

__all__ = [
    "AutomorphismGroup",
    "automorphisms",
    "CageSymmetry",
    "cage_symmetry",
    "Fingerprint",
    "NmrPrediction",
    "VibrationalPrediction",
    "ElectronicPrediction",
    "fingerprint",
    "predict_nmr",
    "predict_vibrational",
    "predict_electronic",
    "symmetric_geometry",
    "point_group_from_geometry",
    "clear_caches",
    "SymmetricGeometry",
    "GEOMETRY_TOL",
    "to_xyz",
    *_LAZY,
]


def __getattr__(name: str):
    if name in _LAZY:
        mod = importlib.import_module(f"{__name__}.{_LAZY[name]}")
        return getattr(mod, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
