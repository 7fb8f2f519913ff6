"""From a free induction decay to a 1D spectrum: the processing steps, each visible and settable.

The steps are the ones every NMR processing program applies (standard practice, no
single source): removal of the digital filter's group delay, apodisation (exponential or
Gaussian line broadening in Hz), zero filling, Fourier transform, zero- and first-order
phase correction (automatic, or set by hand), a polynomial baseline and the ppm axis
from the acquisition's frequencies.  Everything is plain numpy on plain records:
:class:`Acquisition` says what the spectrometer did, :class:`FidProcessing` what to do
with it, and :func:`process_fid` returns a :class:`ProcessedFid` with a diagnostics
dict that records every number used, so a collaborator can redo it.

Conventions
-----------
The FID is complex, ``s(t) = sum A exp(i (2 pi f t + phi)) exp(-t / T2)`` with ``f`` the
offset from the carrier in Hz (positive = higher ppm), sampled every ``1 / sw_hz``
seconds.  ``ppm = (f + carrier_offset_hz) / sf_mhz`` where ``sf_mhz`` is the frequency
of 0 ppm.  Phase angles are degrees; the first-order phase ``p1`` is the change
across the whole spectral width, pivoting at the high-ppm (left) edge, so the
correction at fraction ``x`` of the width from the left edge is ``p0 + p1 * x``.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
from scipy.signal import find_peaks

from ..errors import SpectrumError
from .references import multiplet_lines

__all__ = ["Acquisition", "FidProcessing", "ProcessedFid", "process_fid", "auto_phase",
           "reference_offset", "WINDOWS", "PHASE_PEAKS", "REFERENCE_SEARCH_PPM"]

#: apodisation windows known to :func:`process_fid`
WINDOWS = ("exponential", "gaussian", "none")
#: how many of the strongest lines the automatic phase correction reads
PHASE_PEAKS = 40
#: how far (ppm) from its tabulated value a solvent or TMS line is looked for
REFERENCE_SEARCH_PPM = 1.0
#: ... and at least this fraction of the tallest line's height (truncation wiggles are not lines)
PHASE_MIN_FRACTION = 0.02
#: lines this many noise levels above the baseline count for the automatic phase
PHASE_SNR = 8.0


@dataclass(frozen=True)
class Acquisition:
    """What the spectrometer did, read from the experiment's parameter file.

    Parameters
    ----------
    sw_hz : float
        Spectral width (the sampling rate of the complex FID), Hz.
    sf_mhz : float
        Frequency of 0 ppm, MHz (the spectrometer frequency of the nucleus).
    carrier_offset_hz : float
        Carrier frequency minus the 0-ppm frequency, Hz (so the carrier sits at
        ``carrier_offset_hz / sf_mhz`` ppm).
    group_delay : float
        Points of the digital filter's delay at the start of the FID (0 for analogue
        filtering or data already corrected).
    nucleus, solvent, date, vendor : str
        As stored (``date`` ISO 8601 when known); ``vendor`` ``"bruker"`` or ``"varian"``.
    referenced : bool
        False when the file did not say where 0 ppm is (then reference with a line).
    """

    sw_hz: float
    sf_mhz: float
    carrier_offset_hz: float
    group_delay: float = 0.0
    nucleus: str = "13C"
    solvent: str = ""
    date: str = ""
    vendor: str = ""
    referenced: bool = True

    def __post_init__(self):
        for name in ("sw_hz", "sf_mhz"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise SpectrumError(f"acquisition {name} must be a positive number, got {v!r}")
        if not (math.isfinite(self.group_delay) and 0 <= self.group_delay < 1000):
            raise SpectrumError(f"acquisition group_delay {self.group_delay!r} is not a "
                                "number of points in 0-1000")


@dataclass(frozen=True)
class FidProcessing:
    """The processing settings (defaults suit 13C spectra of carbon cages).

    Parameters
    ----------
    line_broadening_hz : float
        Apodisation width in Hz, 0-50 (default 0.3: keeps two lines 0.012 ppm apart
        at 100 MHz resolved; raise it for low S/N).
    window : {"exponential", "gaussian", "none"}
        Exponential multiplication adds ``line_broadening_hz`` to the Lorentzian
        width; the Gaussian window gives a Gaussian of that width.
    zero_fill : int
        Points after zero filling as a multiple (1-16) of the FID's length rounded up to
        a power of two.
    phase : {"auto", "manual"}
        ``"auto"`` fits p0 and p1 to the strongest lines; ``"manual"`` uses ``p0``, ``p1``.
    p0, p1 : float
        Manual zero- and first-order phase in degrees (see the module conventions).
    baseline_order : int
        Order of the polynomial fitted to the signal-free points (0-8); -1 for none.
    reference : str or float
        ``"stored"`` (the file's frequencies), ``"solvent"`` (the nearest tabulated line of
        the solvent, within ``REFERENCE_TOL``, is moved onto its value), ``"tms"`` (the
        line nearest 0 ppm is set to 0), or a number of ppm to add to the axis.
    """

    line_broadening_hz: float = 0.3
    window: str = "exponential"
    zero_fill: int = 2
    phase: str = "auto"
    p0: float = 0.0
    p1: float = 0.0
    baseline_order: int = 2
    reference: Any = "stored"

    def __post_init__(self):
        lb = self.line_broadening_hz
        if not (math.isfinite(lb) and 0 <= lb <= 50):
            raise SpectrumError(f"line_broadening_hz={lb!r} is outside 0-50 Hz")
        if self.window not in WINDOWS:
            raise SpectrumError(f"window={self.window!r}; use one of {', '.join(WINDOWS)}")
        if int(self.zero_fill) != self.zero_fill or not 1 <= self.zero_fill <= 16:
            raise SpectrumError(f"zero_fill={self.zero_fill!r} must be a whole number 1-16")
        if self.phase not in ("auto", "manual"):
            raise SpectrumError(f"phase={self.phase!r}; use 'auto' or 'manual'")
        for name in ("p0", "p1"):
            if not math.isfinite(getattr(self, name)):
                raise SpectrumError(f"{name} must be a finite number of degrees")
        if int(self.baseline_order) != self.baseline_order or not -1 <= self.baseline_order <= 8:
            raise SpectrumError(f"baseline_order={self.baseline_order!r} must be -1 (none) "
                                "or a whole number 0-8")
        ref = self.reference
        if not (isinstance(ref, (int, float)) and math.isfinite(ref)) and ref not in (
                "stored", "solvent", "tms"):
            raise SpectrumError(f"reference={ref!r}; use 'stored', 'solvent', 'tms' or a "
                                "number of ppm")

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class ProcessedFid:
    """A processed 1D spectrum: ppm axis (descending, as drawn) and real intensities."""

    ppm: np.ndarray
    real: np.ndarray
    diagnostics: dict = field(default_factory=dict)


def _window(n: int, sw_hz: float, settings: FidProcessing, start: float) -> np.ndarray:
    t = (np.arange(n) - start).clip(min=0) / sw_hz
    lb = settings.line_broadening_hz
    if settings.window == "exponential" and lb > 0:
        return np.exp(-math.pi * lb * t)
    if settings.window == "gaussian" and lb > 0:
        return np.exp(-((math.pi * lb * t) ** 2) / (4 * math.log(2)))
    return np.ones(n)


def _phase_ramp(m: int, p0: float, p1: float) -> np.ndarray:
    """exp(i (p0 + p1 x)) over the bins, x = 0 at the high-ppm (last) bin, 1 at the first."""
    x = 1.0 - np.arange(m) / m
    return np.exp(1j * np.deg2rad(p0 + p1 * x))


def _noise(values: np.ndarray) -> float:
    d = np.diff(values)
    return float(1.4826 * np.median(np.abs(d - np.median(d))) / math.sqrt(2)) or 1e-300


def auto_phase(spec: np.ndarray) -> tuple[float, float, dict]:
    """Zero- and first-order phase (degrees) that make the strongest lines absorptive.

    The phase of each strong line is read at its apex (interpolated between the two
    bins around the maximum of the magnitude), then ``p0 + p1 x`` is fitted to them
    on the circle, weighted by height: a grid over ``p1`` (0.5 degree steps within
    +-360) with the circular mean for ``p0``, then Gauss-Newton.  Bins ascend in
    frequency (``spec`` as from ``fftshift(fft(fid))``).

    Returns
    -------
    (p0, p1, diagnostics)
        The correction to apply (see the module conventions).
    """
    m = spec.size
    mag = np.abs(spec)
    noise = _noise(spec.real) + _noise(spec.imag)
    floor = max(PHASE_SNR * noise, PHASE_MIN_FRACTION * mag.max())
    idx, props = find_peaks(mag, height=floor, prominence=floor)
    if idx.size == 0:
        return 0.0, 0.0, {"phase_lines": 0}
    top = idx[np.argsort(props["peak_heights"])[::-1][:PHASE_PEAKS]]
    top = top[(top > 0) & (top < m - 1)]
    if top.size == 0:
        return 0.0, 0.0, {"phase_lines": 0}
    a, b, c = mag[top - 1], mag[top], mag[top + 1]
    den = a - 2 * b + c
    delta = np.where(den != 0, 0.5 * (a - c) / np.where(den != 0, den, 1), 0.0).clip(-0.5, 0.5)
    nbr = top + np.where(delta >= 0, 1, -1)
    th0 = np.angle(spec[top])
    th1 = th0 + np.angle(spec[nbr] * np.conj(spec[top]))
    theta = th0 + np.abs(delta) * (th1 - th0)
    x = 1.0 - (top + delta) / m
    w = mag[top] / mag[top].max()
    if top.size == 1:
        return float(np.rad2deg(-theta[0])), 0.0, {"phase_lines": 1}

    def p0_for(p1r):
        return np.angle(np.sum(w * np.exp(-1j * (theta + p1r * x))))

    grid = np.deg2rad(np.arange(-360.0, 360.25, 0.5))
    resid = [np.sum(w * (1 - np.cos(theta + p0_for(g) + g * x))) for g in grid]
    p1r = grid[int(np.argmin(resid))]
    p0r = p0_for(p1r)
    def cost(q0, q1):
        r = np.angle(np.exp(1j * (theta + q0 + q1 * x)))
        return r, float(np.sum(w * r * r))

    r, c0 = cost(p0r, p1r)
    jac = np.stack([np.ones_like(x), x], axis=1) * np.sqrt(w)[:, None]
    for _ in range(8):  # Gauss-Newton on the wrapped residuals, kept only while it helps
        step, *_ = np.linalg.lstsq(jac, -r * np.sqrt(w), rcond=None)
        r1, c1 = cost(p0r + step[0], p1r + step[1])
        if c1 >= c0 or abs(p1r + step[1]) > 2 * math.pi:
            break
        p0r, p1r, r, c0 = p0r + step[0], p1r + step[1], r1, c1
    r = np.angle(np.exp(1j * (theta + p0r + p1r * x)))
    return (float(np.rad2deg(np.angle(np.exp(1j * p0r)))), float(np.rad2deg(p1r)),
            {"phase_lines": int(top.size),
             "phase_residual_deg": float(np.rad2deg(np.sqrt(np.sum(w * r * r) / w.sum())))})


def _baseline(y: np.ndarray, order: int) -> np.ndarray:
    """Polynomial through the signal-free points (iteratively clipped at 3 noise levels)."""
    xs = np.linspace(-1.0, 1.0, y.size)
    keep = np.ones(y.size, bool)
    sigma = _noise(y)
    base = np.zeros_like(y)
    for _ in range(6):
        coef = np.polynomial.polynomial.polyfit(xs[keep], y[keep], order)
        base = np.polynomial.polynomial.polyval(xs, coef)
        new = np.abs(y - base) < 3 * sigma
        if new.sum() < order + 2 or np.array_equal(new, keep):
            break
        keep = new
    return base


def process_fid(fid: np.ndarray, acq: Acquisition,
                settings: FidProcessing | None = None) -> ProcessedFid:
    """Process a complex 1D FID into a real spectrum on a ppm axis.

    Parameters
    ----------
    fid : ndarray of complex
        The FID as acquired (digital-filter points included).
    acq : Acquisition
    settings : FidProcessing, optional
        Defaults of :class:`FidProcessing` when None.

    Returns
    -------
    ProcessedFid
        ``diagnostics`` holds the settings, the phase used (``p0``, ``p1`` degrees,
        and whether automatic), the points and the referencing offset.

    Examples
    --------
    >>> sw, sf = 20000.0, 100.0
    >>> t = np.arange(4096) / sw
    >>> fid = np.exp(2j * np.pi * 1500.0 * t - 40.0 * t) * np.exp(0.5j)
    >>> out = process_fid(fid, Acquisition(sw, sf, carrier_offset_hz=10000.0))
    >>> round(float(out.ppm[np.argmax(out.real)]), 1)   # (1500 + 10000) / 100
    115.0
    >>> bool(abs(out.diagnostics["p0"] + np.rad2deg(0.5)) < 1)
    True
    """
    s = settings or FidProcessing()
    fid = np.asarray(fid)
    if fid.ndim != 1 or not np.iscomplexobj(fid):
        raise SpectrumError("process_fid needs a 1D complex FID")
    n = fid.size
    if n < 16:
        raise SpectrumError(f"the FID has {n} complex points; too short to process")
    if not np.isfinite(fid).all():
        raise SpectrumError("the FID holds non-finite values")
    g = float(acq.group_delay)
    data = fid * _window(n, acq.sw_hz, s, g)
    if g == 0:
        data = data.copy()
        data[0] *= 0.5  # the first point counts half in a discrete transform
    m = int(2 ** math.ceil(math.log2(n))) * int(s.zero_fill)
    spec = np.fft.fftshift(np.fft.fft(data, m))
    freq = (np.arange(m) - m // 2) * (acq.sw_hz / m)
    if g:
        spec *= np.exp(2j * np.pi * g * freq / acq.sw_hz)  # undo the filter's delay
    diag: dict[str, Any] = {"settings": s.to_dict(), "points": n, "size": m,
                            "group_delay": g}
    if s.phase == "auto":
        p0, p1, pdiag = auto_phase(spec)
        diag.update(pdiag)
    else:
        p0, p1 = s.p0, s.p1
    spec = spec * _phase_ramp(m, p0, p1)
    diag.update({"p0": p0, "p1": p1, "phase_mode": s.phase})
    real = spec.real
    if s.baseline_order >= 0:
        real = real - _baseline(real, s.baseline_order)
    ppm = (freq + acq.carrier_offset_hz) / acq.sf_mhz
    offset, note = reference_offset(ppm, real, acq, s)
    diag.update({"reference_offset_ppm": offset, "reference": note})
    return ProcessedFid((ppm + offset)[::-1].copy(), real[::-1].copy(), diag)


def reference_offset(ppm: np.ndarray, real: np.ndarray, acq: Acquisition,
                     settings: FidProcessing) -> tuple[float, str]:
    """The ppm to add to the axis, and what it was set from.

    For ``"solvent"`` and ``"tms"`` the whole multiplet of each tabulated carbon
    (its lines spaced by J(C,D) at the acquisition's frequency) is slid over
    +-``REFERENCE_SEARCH_PPM`` and put where it covers the most intensity; the
    carbon with the strongest match sets the offset.
    """
    ref = settings.reference
    if not isinstance(ref, str):
        return float(ref), f"{float(ref):+g} ppm added by hand"
    if ref == "stored":
        return 0.0, ("stored frequencies" if acq.referenced
                     else "stored frequencies (the file gives no reference: unreferenced)")
    if ref == "tms":
        groups = {"TMS": [(0.0, 1.0)]}
    else:
        if not acq.solvent:
            raise SpectrumError("reference='solvent' but the experiment names no solvent; "
                                "pass solvent= or reference='tms' or a number")
        groups = {}
        for pos, w, label in multiplet_lines(acq.solvent, acq.sf_mhz):
            groups.setdefault(label, []).append((pos, w))
    asc_x, asc_y = ppm, real  # ascending ppm here
    step = abs(float(ppm[1] - ppm[0]))
    shifts = np.arange(-REFERENCE_SEARCH_PPM, REFERENCE_SEARCH_PPM + step / 2, step)
    best = (-np.inf, 0.0, "")
    for label, lines in groups.items():
        score = np.zeros(shifts.size)
        for pos, w in lines:
            score += w * np.interp(pos + shifts, asc_x, asc_y, left=0.0, right=0.0)
        k = int(np.argmax(score))
        if score[k] > best[0]:
            best = (float(score[k]), float(shifts[k]), label)
    _, shift, label = best
    return -shift, f"{label} line(s) at their tabulated shift"
