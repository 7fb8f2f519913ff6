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
from .pointgroup import SYMMETRY_TOL, PointGroupMatch, identify_point_group
from .reduce import (
    REDUCE_TOL,
    VibrationalAnalysis,
    cartesian_character,
    class_characters,
    direct_product,
    gamma_3n,
    reduce_representation,
    representation_characters,
    transition_allowed,
    vibrational_analysis,
)
from .tables import POINT_GROUPS, CharacterTable, character_table

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
    "character_table",
    "CharacterTable",
    "POINT_GROUPS",
    "identify_point_group",
    "PointGroupMatch",
    "SYMMETRY_TOL",
    "reduce_representation",
    "gamma_3n",
    "vibrational_analysis",
    "direct_product",
    "transition_allowed",
    "cartesian_character",
    "class_characters",
    "representation_characters",
    "VibrationalAnalysis",
    "REDUCE_TOL",
]
