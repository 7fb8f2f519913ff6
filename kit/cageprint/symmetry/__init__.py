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

__all__ = [  # alphabetical
    "AutomorphismGroup",
    "automorphisms",
    "cage_symmetry",
    "CageSymmetry",
    "cartesian_character",
    "character_table",
    "CharacterTable",
    "class_characters",
    "clear_caches",
    "direct_product",
    "ElectronicPrediction",
    "Fingerprint",
    "fingerprint",
    "gamma_3n",
    "GEOMETRY_TOL",
    "identify_point_group",
    "NmrPrediction",
    "point_group_from_geometry",
    "POINT_GROUPS",
    "PointGroupMatch",
    "predict_electronic",
    "predict_nmr",
    "predict_vibrational",
    "reduce_representation",
    "REDUCE_TOL",
    "representation_characters",
    "symmetric_geometry",
    "SymmetricGeometry",
    "SYMMETRY_TOL",
    "to_xyz",
    "transition_allowed",
    "vibrational_analysis",
    "VibrationalAnalysis",
    "VibrationalPrediction",
]
