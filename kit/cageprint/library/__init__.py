"""The persistent cage library: build it once on Dask, read it instantly afterwards.

Examples
--------
>>> import tempfile, pathlib
>>> from cageprint.library import build_library, query_cages
>>> lib = pathlib.Path(tempfile.mkdtemp()) / "cages.duckdb"
>>> _ = build_library("C60-C70", path=lib, workers=0, progress=False)
>>> query_cages(lib, pattern="1x60")[["formula", "isomer", "point_group"]].values.tolist()
[['C60', 1, 'Ih']]

Reading needs the optional packages of the ``[library]`` extra (duckdb, and
dask[distributed] for builds on more than one process).
"""

from __future__ import annotations

from .build import BuildReport, RangeReport, build_library, dask_client, parse_range
from .pieces import Piece, plan_pieces
from .query import (
    PAIRS_MEMO,
    library_cages,
    library_candidates,
    library_energies,
    library_geometries,
    library_indices,
    library_info,
    normalise_pattern,
    query_cages,
)
from .store import CHARGES, default_path, export_parquet, open_library

__all__ = [
    "CHARGES",
    "PAIRS_MEMO",
    "BuildReport",
    "RangeReport",
    "Piece",
    "build_library",
    "dask_client",
    "default_path",
    "export_parquet",
    "library_cages",
    "library_candidates",
    "library_energies",
    "library_geometries",
    "library_indices",
    "library_info",
    "normalise_pattern",
    "open_library",
    "parse_range",
    "plan_pieces",
    "query_cages",
]
