"""Plain peak lists: position, intensity[, width] as delimited text -> ``kind="peaks"``.

The same text rules as the delimited reader (:mod:`.delimited`): header and
comment lines, sniffed delimiter and decimal mark, units in brackets.
"""

from __future__ import annotations

import numpy as np

from ...errors import SpectrumFormatError
from ._common import BYTES_SOURCE, ReadLimits, build_spectrum, limits_for
from .delimited import describe_table, read_table

__all__ = ["parse_peaklist"]


def parse_peaklist(data: bytes, source: str = BYTES_SOURCE, *, technique: str | None = None,
                   x_column=None, y_column=None, width_column=None,
                   x_unit: str | None = None, y_unit: str | None = None,
                   observe_mhz: float | None = None, delimiter: str = "auto",
                   decimal: str = "auto", encoding: str | None = None,
                   max_points: int | None = None, meta: dict | None = None,
                   limits: ReadLimits | None = None):
    """Read a plain peak list: position, intensity[, width] -> ``Spectrum(kind="peaks")``.

    Same text rules as :func:`parse_delimited`; the rows may come in any
    order (they are sorted) but positions must not repeat.  A third column is
    taken as the width (same unit as the position) unless ``width_column`` says
    otherwise.

    Examples
    --------
    >>> s = parse_peaklist(b"ppm intensity width\\n143.1 5 0.02\\n147.5 10 0.02\\n",
    ...                    technique="nmr")
    >>> s.kind, s.x.tolist(), s.widths.tolist()
    ('peaks', [143.1, 147.5], [0.02, 0.02])
    """
    limits = limits_for(limits, max_points)
    opts = dict(delimiter=delimiter, decimal=decimal, encoding=encoding, limits=limits)
    table = read_table(
        data, source, opts, {"x": (x_column, 0), "y": (y_column, 1), "width": (width_column, 2)}
    )
    tech, xu, yu, m, observe_mhz = describe_table(
        table, data, source, "peaklist", technique=technique, x_unit=x_unit, y_unit=y_unit,
        observe_mhz=observe_mhz, meta=meta,
    )
    widths = table.columns.get("width")
    if widths is not None and np.any(widths < 0):
        i = int(np.flatnonzero(widths < 0)[0])
        raise SpectrumFormatError(
            f"negative peak width {float(widths[i])!r}; widths must be >= 0",
            source, table.line_of(i),
        )
    x = table.columns["x"]
    order = np.argsort(x, kind="stable")
    sx = x[order]
    dup = np.flatnonzero(np.diff(sx) == 0)
    if dup.size:
        i = int(order[dup[0] + 1])
        raise SpectrumFormatError(
            f"duplicate peak position {float(x[i])!r}; merge the rows first",
            source, table.line_of(i),
        )
    return build_spectrum(
        x, table.columns["y"], technique=tech, x_unit=xu, y_unit=yu, kind="peaks",
        source=source, meta=m, widths=widths, observe_mhz=observe_mhz,
        line_of=table.line_of, max_points=limits.max_points, check_order=False,
    )
