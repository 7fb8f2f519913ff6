"""13C lines that are not the cage's: solvent and lock multiplets, and deuterium triplets
that no declared solvent explains.

Deuterated solvent carbons show as multiplets (1:1:1 triplets for CD and so on,
:data:`cageprint.spectra.references.COUPLINGS`); at 125 MHz the outer lines of C6D6 sit
0.19 ppm from the centre and are as tall as cage lines, so every line of the multiplet is
excluded, not only the centre.  Used by :func:`cageprint.techniques.nmr.observe_nmr`.
"""

from __future__ import annotations

from collections.abc import Sequence

from ..spectra import references

__all__ = ["find_deuterium_triplets", "solvent_windows", "NMR_TRIPLET_J",
           "NMR_TRIPLET_J_TOL", "NMR_TRIPLET_RATIO", "NMR_TRIPLET_CENTRE_TOL"]


def solvent_windows(solvent: str | None, mhz: float | None, tol: float
                     ) -> list[tuple[float, float, str]]:
    """(ppm, half-width, label) of every line of the solvent's 13C multiplets.

    A multiplet's side lines get a window of at most 0.4 of the line spacing, so a cage
    line between two multiplet lines is kept; singlets and centre lines get ``tol``.
    """
    if not solvent:
        return []
    out = []
    lines = references.multiplet_lines(solvent, mhz)
    for ppm, _w, label in lines:
        side = [abs(q - ppm) for q, _v, lab in lines if lab == label and q != ppm]
        half = min([tol] + [0.4 * d for d in side])
        out.append((float(ppm), half, label))
    return out


#: an unlisted deuterium triplet: spacing J(C,D) between these (Hz), the two spacings
#: equal within NMR_TRIPLET_J_TOL Hz, intensities within a factor NMR_TRIPLET_RATIO
#: (common practice, no source: one-bond 13C-2H couplings of solvents are 19-33 Hz)
NMR_TRIPLET_J = (18.0, 34.0)
NMR_TRIPLET_J_TOL = 0.8
NMR_TRIPLET_RATIO = 1.6
#: ... and its centre within this many ppm of a tabulated deuterated solvent carbon
#: (an unlisted lock is still a common solvent; keeps cage lines from being taken)
NMR_TRIPLET_CENTRE_TOL = 0.5


def _cd_centres() -> list[float]:
    """Shifts of every tabulated CD carbon (1:1:1 triplets) of any solvent."""
    return [ppm for (name, carbon), (n, _j) in references.COUPLINGS.items() if n == 3
            for ppm, c in references.SOLVENT_LINES[name].lines if c == carbon]


def find_deuterium_triplets(positions: Sequence[float], areas: Sequence[float],
                            mhz: float | None) -> list[tuple[int, int, int]]:
    """Indices (low, centre, high) of 1:1:1 triplets with a C-D spacing among lines.

    Lines are a triplet when they are consecutive (nothing between them), equally spaced
    within :data:`NMR_TRIPLET_J_TOL` Hz, spaced by J(C,D) (:data:`NMR_TRIPLET_J`), of
    near-equal area and centred near a tabulated CD solvent carbon.  Without a
    spectrometer frequency nothing can be said: ``[]``.

    Examples
    --------
    >>> find_deuterium_triplets([127.866, 128.06, 128.254, 140.0], [5, 5.3, 4.8, 2], 125.0)
    [(0, 1, 2)]
    >>> find_deuterium_triplets([127.866, 128.06, 128.254], [5, 5, 5], None)
    []
    """
    if not mhz:
        return []
    order = sorted(range(len(positions)), key=lambda i: positions[i])
    p = [positions[i] * mhz for i in order]
    a = [areas[i] for i in order]
    out = []
    centres = _cd_centres()
    k = 0
    while k + 2 < len(p):
        d1, d2 = p[k + 1] - p[k], p[k + 2] - p[k + 1]
        trio = a[k:k + 3]
        if (NMR_TRIPLET_J[0] <= d1 <= NMR_TRIPLET_J[1] and abs(d1 - d2) <= NMR_TRIPLET_J_TOL
                and min(trio) > 0 and max(trio) / min(trio) <= NMR_TRIPLET_RATIO
                and any(abs(p[k + 1] / mhz - c) <= NMR_TRIPLET_CENTRE_TOL for c in centres)):
            out.append((order[k], order[k + 1], order[k + 2]))
            k += 3
        else:
            k += 1
    return out
