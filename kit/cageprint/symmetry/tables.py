"""Character tables of the 28 point groups a fullerene cage can have.

Reviewed data: each table is an aligned literal block with its source in a
comment beside it.  Layout, class order, irrep order and Mulliken labels follow
the tables of F. A. Cotton, *Chemical Applications of Group Theory*, 3rd ed.,
Wiley 1990 (Appendix IIA); the entries were written from the cos(2*pi*k/n)
forms (golden ratio for the five-fold groups) and are checked by
``tests/test_character_tables.py`` (orthogonality, group order, the x,y,z /
Rx,Ry,Rz / quadratic columns against the characters) and against two
independent libraries (posym, libmsym).

Conventions
-----------
* Groups with a pair of complex-conjugate irreps (C3, C3h, S4, S6, T, Th) keep
  the pair as one real, *separably degenerate* irrep (its characters are the
  sum of the pair).  Such irreps are listed in :attr:`CharacterTable.separable`;
  their row norm is 2h instead of h, and a reduction divides by 2h.  This is
  the usual convention for counting vibrational modes and orbital levels.
* Class labels carry their size and operation: ``"12C5^2"``, ``"2S10^3"``,
  ``"15σ"``, ``"3C2'"``, ``"σv(xz)"``.  :func:`class_operation` reads the
  rotation angle and proper/improper kind back from a label.
* Axis-dependent labels (``C2(z)``, ``σv(xz)``, ``C2'`` vs ``C2''``) follow
  Cotton; :func:`cageprint.symmetry.pointgroup.identify_point_group` documents
  how it picks the axes for a given set of operations.

Cell tokens: integers, ``φ`` = (1+√5)/2 = 2cos36°, ``φ-1`` = 2cos72°,
``-φ`` = 2cos144°, ``1-φ`` = 2cos108°, ``√3`` = 2cos30°, ``-√3`` = 2cos150°.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..errors import SymmetryError

__all__ = [
    "CharacterTable",
    "character_table",
    "class_operation",
    "POINT_GROUPS",
    "COTTON_1990",
]

COTTON_1990 = (
    "F. A. Cotton, Chemical Applications of Group Theory, 3rd ed., Wiley 1990, "
    "Appendix IIA (layout and labels); characters written from the cos(2πk/n) forms"
)

_PHI = (1.0 + math.sqrt(5.0)) / 2.0
_TOKENS = {
    "φ": _PHI,
    "-φ": -_PHI,
    "φ-1": _PHI - 1.0,
    "1-φ": 1.0 - _PHI,
    "√3": math.sqrt(3.0),
    "-√3": -math.sqrt(3.0),
}


@dataclass(frozen=True)
class CharacterTable:
    """Character table of one point group (read-only).

    Attributes
    ----------
    name : str
        Schoenflies symbol, e.g. ``"Ih"``.
    order : int
        Group order h.
    classes : tuple of str
        Class labels including their size, e.g. ``("E", "12C5", ...)``.
    class_sizes : tuple of int
        Number of operations in each class (sums to ``order``).
    irreps : tuple of str
        Mulliken labels, in table order.
    dims : tuple of int
        Dimension of each irrep (2 for a separably degenerate pair).
    characters : numpy.ndarray
        Real characters, shape (len(irreps), len(classes)), read-only.
    linear, rotations, quadratic : tuple of str
        Irreps spanned by (x, y, z), by (Rx, Ry, Rz) and by the six quadratic
        functions x², y², z², xy, xz, yz; each in table order.
    separable : tuple of str
        Irreps that are a merged complex-conjugate pair (norm 2h).
    source : str
        The tables the data follow.
    """

    name: str
    order: int
    classes: tuple[str, ...]
    class_sizes: tuple[int, ...]
    irreps: tuple[str, ...]
    dims: tuple[int, ...]
    characters: np.ndarray = field(repr=False, compare=False)
    linear: tuple[str, ...]
    rotations: tuple[str, ...]
    quadratic: tuple[str, ...]
    separable: tuple[str, ...]
    source: str = field(repr=False)

    @cached_property
    def norms(self) -> np.ndarray:
        """Row norm of each irrep: h, or 2h for a separably degenerate pair."""
        return _frozen([2 * self.order if r in self.separable else self.order
                        for r in self.irreps])

    @cached_property
    def vector_characters(self) -> np.ndarray:
        """Characters of (x, y, z) on each class: the trace of the 3x3 matrix."""
        return _frozen([_trace(*class_operation(c)) for c in self.classes])

    @cached_property
    def axial_characters(self) -> np.ndarray:
        """Characters of (Rx, Ry, Rz) on each class: det times trace."""
        return _frozen([det * _trace(det, ang) for det, ang in map(class_operation, self.classes)])

    @cached_property
    def quadratic_characters(self) -> np.ndarray:
        """Characters of the six quadratic functions (symmetric square of x, y, z)."""
        out = []
        for det, ang in map(class_operation, self.classes):
            t = _trace(det, ang)
            t2 = 1.0 + 2.0 * math.cos(2.0 * ang)  # trace of the squared operation
            out.append(0.5 * (t * t + t2))
        return _frozen(out)

    def index(self, irrep: str) -> int:
        """Row of ``irrep``; :class:`SymmetryError` if the table has no such irrep."""
        try:
            return self.irreps.index(irrep)
        except ValueError:
            raise SymmetryError(
                f"irrep {irrep!r}: not in the {self.name} table; expected one of "
                f"{', '.join(self.irreps)}"
            ) from None

    def to_dict(self) -> dict:
        """Plain-data form (lists and strings) for saving or display."""
        return {
            "name": self.name, "order": self.order, "classes": list(self.classes),
            "class_sizes": list(self.class_sizes), "irreps": list(self.irreps),
            "dims": list(self.dims), "characters": self.characters.tolist(),
            "linear": list(self.linear), "rotations": list(self.rotations),
            "quadratic": list(self.quadratic), "separable": list(self.separable),
            "source": self.source,
        }


_LABEL = re.compile(
    r"^(?P<count>\d*)(?:(?P<e>E)|(?P<i>i)|(?P<sig>σ)[hvd]?'*(?:\(\w+\))?"
    r"|(?P<kind>[CS])(?P<n>\d+)(?:\^(?P<k>\d+))?'*(?:\(\w\))?)$"
)


def class_operation(label: str) -> tuple[int, float]:
    """Determinant (+1 proper, -1 improper) and rotation angle of a class label.

    An improper operation S_n^k is a rotation by 2πk/n followed by the
    reflection through the plane perpendicular to the axis: σ has angle 0,
    i has angle π.

    Examples
    --------
    >>> class_operation("12C5^2")
    (1, 2.513...)
    >>> class_operation("15σ"), class_operation("i")
    ((-1, 0.0), (-1, 3.14159...))
    """
    m = _LABEL.match(label)
    if m is None:
        raise SymmetryError(f"class label {label!r}: expected e.g. 'E', '2C5^2', 'i', '3σv'")
    if m["e"]:
        return 1, 0.0
    if m["i"]:
        return -1, math.pi
    if m["sig"]:
        return -1, 0.0
    n, k = int(m["n"]), int(m["k"] or 1)
    return (1 if m["kind"] == "C" else -1), 2.0 * math.pi * k / n


def class_size(label: str) -> int:
    """Leading count of a class label (1 if none)."""
    m = re.match(r"\d+", label)
    return int(m.group()) if m else 1


def _frozen(values) -> np.ndarray:
    a = np.array(values, dtype=float)
    a.setflags(write=False)
    return a


def _trace(det: int, angle: float) -> float:
    return det + 2.0 * math.cos(angle)


def _cell(tok: str) -> float:
    if tok in _TOKENS:
        return _TOKENS[tok]
    try:
        return float(int(tok))
    except ValueError:
        raise SymmetryError(f"character table cell {tok!r}: expected an integer or one of "
                            f"{', '.join(_TOKENS)}") from None


def _table(name: str, block: str, *, linear: str, rotations: str, quadratic: str,
           separable: str = "", source: str = COTTON_1990) -> CharacterTable:
    rows = [ln.split() for ln in block.strip().splitlines() if ln.strip()]
    head, body = rows[0], rows[1:]
    if head[0] != name:
        raise SymmetryError(f"table {name}: header starts with {head[0]!r}")
    classes = tuple(head[1:])
    irreps = tuple(r[0] for r in body)
    chars = np.array([[_cell(t) for t in r[1:]] for r in body], dtype=float)
    if chars.shape != (len(irreps), len(classes)):
        raise SymmetryError(f"table {name}: ragged rows")
    chars.setflags(write=False)
    sizes = tuple(class_size(c) for c in classes)
    sep = tuple(separable.split())
    return CharacterTable(
        name=name, order=sum(sizes), classes=classes, class_sizes=sizes, irreps=irreps,
        dims=tuple(int(round(x)) for x in chars[:, 0]), characters=chars,
        linear=tuple(linear.split()), rotations=tuple(rotations.split()),
        quadratic=tuple(quadratic.split()), separable=sep, source=source,
    )


_T: dict[str, CharacterTable] = {}


def _add(*args, **kw) -> None:
    t = _table(*args, **kw)
    _T[t.name] = t


# ---------------------------------------------------------------- nonaxial groups
# Source: Cotton 1990, Appendix IIA, C1.
_add("C1", """
C1  E
A   1
""", linear="A", rotations="A", quadratic="A")

# Source: Cotton 1990, Appendix IIA, Cs.
_add("Cs", """
Cs   E   σh
A'   1   1
A''  1  -1
""", linear="A' A''", rotations="A' A''", quadratic="A' A''")

# Source: Cotton 1990, Appendix IIA, Ci.
_add("Ci", """
Ci   E   i
Ag   1   1
Au   1  -1
""", linear="Au", rotations="Ag", quadratic="Ag")

# ---------------------------------------------------------------- Cn groups
# Source: Cotton 1990, Appendix IIA, C2.
_add("C2", """
C2  E   C2
A   1   1
B   1  -1
""", linear="A B", rotations="A B", quadratic="A B")

# Source: Cotton 1990, Appendix IIA, C3; complex pair kept as one real E.
_add("C3", """
C3  E   C3   C3^2
A   1   1    1
E   2  -1   -1
""", linear="A E", rotations="A E", quadratic="A E", separable="E")

# ---------------------------------------------------------------- Cnv groups
# Source: Cotton 1990, Appendix IIA, C2v (B1 symmetric under σv(xz)).
_add("C2v", """
C2v  E   C2   σv(xz)  σv'(yz)
A1   1   1    1       1
A2   1   1   -1      -1
B1   1  -1    1      -1
B2   1  -1   -1       1
""", linear="A1 B1 B2", rotations="A2 B1 B2", quadratic="A1 A2 B1 B2")

# Source: Cotton 1990, Appendix IIA, C3v.
_add("C3v", """
C3v  E   2C3  3σv
A1   1   1    1
A2   1   1   -1
E    2  -1    0
""", linear="A1 E", rotations="A2 E", quadratic="A1 E")

# ---------------------------------------------------------------- Cnh groups
# Source: Cotton 1990, Appendix IIA, C2h.
_add("C2h", """
C2h  E   C2   i    σh
Ag   1   1    1    1
Bg   1  -1    1   -1
Au   1   1   -1   -1
Bu   1  -1   -1    1
""", linear="Au Bu", rotations="Ag Bg", quadratic="Ag Bg")

# Source: Cotton 1990, Appendix IIA, C3h; complex pairs kept as real E' and E''.
_add("C3h", """
C3h  E   C3   C3^2  σh   S3   S3^5
A'   1   1    1     1    1    1
E'   2  -1   -1     2   -1   -1
A''  1   1    1    -1   -1   -1
E''  2  -1   -1    -2    1    1
""", linear="E' A''", rotations="A' E''", quadratic="A' E' E''", separable="E' E''")

# ---------------------------------------------------------------- S2n groups
# Source: Cotton 1990, Appendix IIA, S4; complex pair kept as one real E.
_add("S4", """
S4  E   S4   C2   S4^3
A   1   1    1    1
B   1  -1    1   -1
E   2   0   -2    0
""", linear="B E", rotations="A E", quadratic="A B E", separable="E")

# Source: Cotton 1990, Appendix IIA, S6 (= C3i); complex pairs kept as real Eg and Eu.
_add("S6", """
S6   E   C3   C3^2  i    S6^5  S6
Ag   1   1    1     1    1     1
Eg   2  -1   -1     2   -1    -1
Au   1   1    1    -1   -1    -1
Eu   2  -1   -1    -2    1     1
""", linear="Au Eu", rotations="Ag Eg", quadratic="Ag Eg", separable="Eg Eu")

# ---------------------------------------------------------------- Dn groups
# Source: Cotton 1990, Appendix IIA, D2.
_add("D2", """
D2   E   C2(z)  C2(y)  C2(x)
A    1   1      1      1
B1   1   1     -1     -1
B2   1  -1      1     -1
B3   1  -1     -1      1
""", linear="B1 B2 B3", rotations="B1 B2 B3", quadratic="A B1 B2 B3")

# Source: Cotton 1990, Appendix IIA, D3.
_add("D3", """
D3   E   2C3  3C2
A1   1   1    1
A2   1   1   -1
E    2  -1    0
""", linear="A2 E", rotations="A2 E", quadratic="A1 E")

# Source: Cotton 1990, Appendix IIA, D5.
_add("D5", """
D5   E   2C5   2C5^2  5C2
A1   1   1     1      1
A2   1   1     1     -1
E1   2   φ-1  -φ      0
E2   2  -φ     φ-1    0
""", linear="A2 E1", rotations="A2 E1", quadratic="A1 E1 E2")

# Source: Cotton 1990, Appendix IIA, D6.
_add("D6", """
D6   E   2C6  2C3  C2   3C2'  3C2''
A1   1   1    1    1    1     1
A2   1   1    1    1   -1    -1
B1   1  -1    1   -1    1    -1
B2   1  -1    1   -1   -1     1
E1   2   1   -1   -2    0     0
E2   2  -1   -1    2    0     0
""", linear="A2 E1", rotations="A2 E1", quadratic="A1 E1 E2")

# ---------------------------------------------------------------- Dnh groups
# Source: Cotton 1990, Appendix IIA, D2h.
_add("D2h", """
D2h   E   C2(z)  C2(y)  C2(x)  i    σ(xy)  σ(xz)  σ(yz)
Ag    1   1      1      1      1    1      1      1
B1g   1   1     -1     -1      1    1     -1     -1
B2g   1  -1      1     -1      1   -1      1     -1
B3g   1  -1     -1      1      1   -1     -1      1
Au    1   1      1      1     -1   -1     -1     -1
B1u   1   1     -1     -1     -1   -1      1      1
B2u   1  -1      1     -1     -1    1     -1      1
B3u   1  -1     -1      1     -1    1      1     -1
""", linear="B1u B2u B3u", rotations="B1g B2g B3g", quadratic="Ag B1g B2g B3g")

# Source: Cotton 1990, Appendix IIA, D3h.
_add("D3h", """
D3h   E   2C3  3C2  σh   2S3  3σv
A1'   1   1    1    1    1    1
A2'   1   1   -1    1    1   -1
E'    2  -1    0    2   -1    0
A1''  1   1    1   -1   -1   -1
A2''  1   1   -1   -1   -1    1
E''   2  -1    0   -2    1    0
""", linear="E' A2''", rotations="A2' E''", quadratic="A1' E' E''")

# Source: Cotton 1990, Appendix IIA, D5h.
_add("D5h", """
D5h   E   2C5   2C5^2  5C2  σh   2S5   2S5^3  5σv
A1'   1   1     1      1    1    1     1      1
A2'   1   1     1     -1    1    1     1     -1
E1'   2   φ-1  -φ      0    2    φ-1  -φ      0
E2'   2  -φ     φ-1    0    2   -φ     φ-1    0
A1''  1   1     1      1   -1   -1    -1     -1
A2''  1   1     1     -1   -1   -1    -1      1
E1''  2   φ-1  -φ      0   -2    1-φ   φ      0
E2''  2  -φ     φ-1    0   -2    φ     1-φ    0
""", linear="E1' A2''", rotations="A2' E1''", quadratic="A1' E2' E1''")

# Source: Cotton 1990, Appendix IIA, D6h.
_add("D6h", """
D6h   E   2C6  2C3  C2   3C2'  3C2''  i    2S3  2S6  σh   3σd  3σv
A1g   1   1    1    1    1     1      1    1    1    1    1    1
A2g   1   1    1    1   -1    -1      1    1    1    1   -1   -1
B1g   1  -1    1   -1    1    -1      1   -1    1   -1    1   -1
B2g   1  -1    1   -1   -1     1      1   -1    1   -1   -1    1
E1g   2   1   -1   -2    0     0      2    1   -1   -2    0    0
E2g   2  -1   -1    2    0     0      2   -1   -1    2    0    0
A1u   1   1    1    1    1     1     -1   -1   -1   -1   -1   -1
A2u   1   1    1    1   -1    -1     -1   -1   -1   -1    1    1
B1u   1  -1    1   -1    1    -1     -1    1   -1    1   -1    1
B2u   1  -1    1   -1   -1     1     -1    1   -1    1    1   -1
E1u   2   1   -1   -2    0     0     -2   -1    1    2    0    0
E2u   2  -1   -1    2    0     0     -2    1    1   -2    0    0
""", linear="A2u E1u", rotations="A2g E1g", quadratic="A1g E1g E2g")

# ---------------------------------------------------------------- Dnd groups
# Source: Cotton 1990, Appendix IIA, D2d.
_add("D2d", """
D2d   E   2S4  C2   2C2'  2σd
A1    1   1    1    1     1
A2    1   1    1   -1    -1
B1    1  -1    1    1    -1
B2    1  -1    1   -1     1
E     2   0   -2    0     0
""", linear="B2 E", rotations="A2 E", quadratic="A1 B1 B2 E")

# Source: Cotton 1990, Appendix IIA, D3d.
_add("D3d", """
D3d   E   2C3  3C2  i    2S6  3σd
A1g   1   1    1    1    1    1
A2g   1   1   -1    1    1   -1
Eg    2  -1    0    2   -1    0
A1u   1   1    1   -1   -1   -1
A2u   1   1   -1   -1   -1    1
Eu    2  -1    0   -2    1    0
""", linear="A2u Eu", rotations="A2g Eg", quadratic="A1g Eg")

# Source: Cotton 1990, Appendix IIA, D5d.
_add("D5d", """
D5d   E   2C5   2C5^2  5C2  i    2S10^3  2S10  5σd
A1g   1   1     1      1    1    1       1     1
A2g   1   1     1     -1    1    1       1    -1
E1g   2   φ-1  -φ      0    2    φ-1    -φ     0
E2g   2  -φ     φ-1    0    2   -φ       φ-1   0
A1u   1   1     1      1   -1   -1      -1    -1
A2u   1   1     1     -1   -1   -1      -1     1
E1u   2   φ-1  -φ      0   -2    1-φ     φ     0
E2u   2  -φ     φ-1    0   -2    φ       1-φ   0
""", linear="A2u E1u", rotations="A2g E1g", quadratic="A1g E1g E2g")

# Source: Cotton 1990, Appendix IIA, D6d.
_add("D6d", """
D6d   E   2S12  2C6  2S4  2C3  2S12^5  C2   6C2'  6σd
A1    1   1     1    1    1    1       1    1     1
A2    1   1     1    1    1    1       1   -1    -1
B1    1  -1     1   -1    1   -1       1    1    -1
B2    1  -1     1   -1    1   -1       1   -1     1
E1    2   √3    1    0   -1   -√3     -2    0     0
E2    2   1    -1   -2   -1    1       2    0     0
E3    2   0    -2    0    2    0      -2    0     0
E4    2  -1    -1    2   -1   -1       2    0     0
E5    2  -√3    1    0   -1    √3     -2    0     0
""", linear="B2 E1", rotations="A2 E5", quadratic="A1 E2 E5")

# ---------------------------------------------------------------- cubic groups
# Source: Cotton 1990, Appendix IIA, T; complex pair kept as one real E.
_add("T", """
T    E   4C3  4C3^2  3C2
A    1   1    1      1
E    2  -1   -1      2
T    3   0    0     -1
""", linear="T", rotations="T", quadratic="A E T", separable="E")

# Source: Cotton 1990, Appendix IIA, Td.
_add("Td", """
Td   E   8C3  3C2  6S4  6σd
A1   1   1    1    1    1
A2   1   1    1   -1   -1
E    2  -1    2    0    0
T1   3   0   -1    1   -1
T2   3   0   -1   -1    1
""", linear="T2", rotations="T1", quadratic="A1 E T2")

# Source: Cotton 1990, Appendix IIA, Th; complex pairs kept as real Eg and Eu.
_add("Th", """
Th   E   4C3  4C3^2  3C2  i    4S6  4S6^5  3σh
Ag   1   1    1      1    1    1    1      1
Eg   2  -1   -1      2    2   -1   -1      2
Tg   3   0    0     -1    3    0    0     -1
Au   1   1    1      1   -1   -1   -1     -1
Eu   2  -1   -1      2   -2    1    1     -2
Tu   3   0    0     -1   -3    0    0      1
""", linear="Tu", rotations="Tg", quadratic="Ag Eg Tg", separable="Eg Eu")

# ---------------------------------------------------------------- icosahedral groups
# Source: Cotton 1990, Appendix IIA, I; φ = (1+√5)/2.
_add("I", """
I    E   12C5  12C5^2  20C3  15C2
A    1   1     1       1     1
T1   3   φ     1-φ     0    -1
T2   3   1-φ   φ       0    -1
G    4  -1    -1       1     0
H    5   0     0      -1     1
""", linear="T1", rotations="T1", quadratic="A H")

# Source: Cotton 1990, Appendix IIA, Ih.
_add("Ih", """
Ih    E   12C5  12C5^2  20C3  15C2  i    12S10  12S10^3  20S6  15σ
Ag    1   1     1       1     1     1    1      1        1     1
T1g   3   φ     1-φ     0    -1     3    1-φ    φ        0    -1
T2g   3   1-φ   φ       0    -1     3    φ      1-φ      0    -1
Gg    4  -1    -1       1     0     4   -1     -1        1     0
Hg    5   0     0      -1     1     5    0      0       -1     1
Au    1   1     1       1     1    -1   -1     -1       -1    -1
T1u   3   φ     1-φ     0    -1    -3    φ-1   -φ        0     1
T2u   3   1-φ   φ       0    -1    -3   -φ      φ-1      0     1
Gu    4  -1    -1       1     0    -4    1      1       -1     0
Hu    5   0     0      -1     1    -5    0      0        1    -1
""", linear="T1u", rotations="T1g", quadratic="Ag Hg")

POINT_GROUPS: tuple[str, ...] = tuple(_T)
"""The 28 Schoenflies symbols with a table, in the order they are defined above."""


def character_table(symbol: str) -> CharacterTable:
    """The character table of a fullerene point group.

    Parameters
    ----------
    symbol : str
        Schoenflies symbol, one of :data:`POINT_GROUPS` (``"Ih"``, ``"D5h"``,
        ``"C2v"``, ...).  ``"S2"`` and ``"C3i"`` are accepted for Ci and S6,
        ``"C1h"`` for Cs.

    Returns
    -------
    CharacterTable

    Raises
    ------
    SymmetryError
        If there is no table for ``symbol``.

    Examples
    --------
    >>> t = character_table("Ih")
    >>> t.order, t.classes[:3], t.irreps[-1]
    (120, ('E', '12C5', '12C5^2'), 'Hu')
    >>> character_table("C3").separable
    ('E',)
    """
    key = {"S2": "Ci", "C3i": "S6", "C1h": "Cs"}.get(symbol, symbol)
    try:
        return _T[key]
    except (KeyError, TypeError):
        raise SymmetryError(
            f"symbol {symbol!r}: no character table; expected one of the 28 fullerene "
            f"point groups: {', '.join(POINT_GROUPS)}"
        ) from None
