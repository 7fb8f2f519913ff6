"""Estimated 13C stick spectra from cage curvature (POAV pyramidalisation).

An ESTIMATE of line order only, drawn beside a measured spectrum; the shifts
are not predicted.  Re-exported by :mod:`cageprint.techniques.nmr`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..cage import Cage
from ..errors import EvidenceError
from ..plain import plain as _plain
from ..symmetry import predict_nmr, symmetric_geometry

__all__ = [
    "ESTIMATE_PPM_AT_C60",
    "ESTIMATE_C60_ANGLE_DEG",
    "ESTIMATE_PPM_PER_DEG",
    "StickSpectrum",
    "pyramidalization_angles",
    "estimated_stick_spectrum",
]

#: stick-spectrum estimate from POAV pyramidalisation: shift at the C60 angle and
#: slope.  From memory: C60 resonates near 143 ppm (pyramidalisation 11.6 deg); in
#: C70 the polar carbons lie ~20 ppm downfield of the flatter equatorial belt, whose
#: angle in the symmetric model geometry is ~8 deg smaller, hence 2.5 ppm per degree.
#: Order-of-magnitude figures for an ESTIMATE of line order only.
ESTIMATE_PPM_AT_C60 = 143.2
ESTIMATE_C60_ANGLE_DEG = 11.64
ESTIMATE_PPM_PER_DEG = 2.5

@dataclass(frozen=True)
class StickSpectrum:
    """An estimated stick spectrum: one stick per orbit, height = orbit size.

    The positions are an ESTIMATE from cage curvature (POAV pyramidalisation
    of the symmetric model geometry), good for the order of lines at best.
    """

    positions: tuple[float, ...]
    heights: tuple[int, ...]
    angles_deg: tuple[float, ...]
    label: str = "estimate from POAV pyramidalisation (line order only)"

    def to_dict(self) -> dict[str, Any]:
        return _plain({"positions": self.positions, "heights": self.heights,
                       "angles_deg": self.angles_deg, "label": self.label})


def pyramidalization_angles(coords: Any, neighbours: Any) -> np.ndarray:
    """POAV1 pyramidalisation angle (degrees) of each atom.

    Parameters
    ----------
    coords : (n, 3) array
    neighbours : (n, 3) int array

    Notes
    -----
    The pi-orbital axis vector makes equal angles theta with the three sigma
    bonds; the pyramidalisation angle is theta - 90 degrees (POAV1, Haddon,
    J. Am. Chem. Soc. 1986; from memory).  A planar sp2 carbon gives 0.

    Examples
    --------
    >>> xyz = [[0, 0, 0], [1, 0, 0], [-0.5, 0.866, 0], [-0.5, -0.866, 0]]
    >>> nb = [[1, 2, 3], [0, 2, 3], [0, 1, 3], [0, 1, 2]]
    >>> float(round(pyramidalization_angles(xyz, nb)[0], 6))
    0.0
    """
    x = np.asarray(coords, float)
    nb = np.asarray(neighbours, int)
    u = x[nb] - x[:, None, :]
    u /= np.linalg.norm(u, axis=2, keepdims=True)
    v = np.cross(u[:, 1] - u[:, 0], u[:, 2] - u[:, 0])
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    # orient away from the bonds
    sign = np.sign(-np.einsum("ij,ij->i", v, u.sum(axis=1)))
    sign[sign == 0] = 1.0
    v *= sign[:, None]
    cos_t = np.clip(np.einsum("ij,ij->i", v, u[:, 0]), -1.0, 1.0)
    return np.degrees(np.arccos(cos_t)) - 90.0


def estimated_stick_spectrum(cage: Any, prediction: Any = None, *,
                             geometry: Any = None) -> StickSpectrum:
    """Estimated 13C stick spectrum of a candidate (an ESTIMATE of line order).

    Parameters
    ----------
    cage : Cage, Candidate or Fingerprint
        A Cage needs ``.neighbours`` (the geometry defaults to
        ``cageprint.symmetry.symmetric_geometry(cage)``); a Candidate or a
        Fingerprint is rebuilt from its face spiral.
    prediction : NmrPrediction or Fingerprint, optional
        Needs ``.orbits`` (atom tuples); defaults to ``predict_nmr(cage)``.
    geometry : (n, 3) array, optional

    Notes
    -----
    More pyramidal carbons lie further downfield (the usual trend); the
    shift is ``ESTIMATE_PPM_AT_C60 + ESTIMATE_PPM_PER_DEG * (angle -
    ESTIMATE_C60_ANGLE_DEG)``.  The geometry is a symmetric model, not an
    optimised structure, so only the order of the sticks means anything.
    """
    if not hasattr(cage, "neighbours"):
        spiral = getattr(cage, "spiral", None)
        if not spiral:
            raise EvidenceError("estimated_stick_spectrum: expected a Cage, or a Candidate or "
                                f"Fingerprint with a face spiral; got {type(cage).__name__}")
        if prediction is None and hasattr(cage, "nmr") and hasattr(cage.nmr, "orbits"):
            prediction = cage.nmr
        cage = Cage.from_spiral(int(cage.n), tuple(spiral))
    if prediction is None:
        prediction = predict_nmr(cage)
    nmr = getattr(prediction, "nmr", prediction)
    orbits = getattr(nmr, "orbits", None)
    if not orbits:
        raise EvidenceError("estimated_stick_spectrum: the prediction carries no orbits")
    if geometry is None:
        geometry = symmetric_geometry(cage)
    geometry = getattr(geometry, "coords", geometry)
    ang = pyramidalization_angles(geometry, cage.neighbours)
    per_orbit = [float(np.mean(ang[list(orb)])) for orb in orbits]
    ppm = [ESTIMATE_PPM_AT_C60 + ESTIMATE_PPM_PER_DEG * (a - ESTIMATE_C60_ANGLE_DEG)
           for a in per_orbit]
    order = np.argsort(ppm)[::-1]
    return StickSpectrum(
        positions=tuple(float(ppm[i]) for i in order),
        heights=tuple(len(orbits[i]) for i in order),
        angles_deg=tuple(float(per_orbit[i]) for i in order),
    )
