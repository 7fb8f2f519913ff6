"""A seeded corpus of full 13C spectra of fullerene fractions, made the way a spectrometer
makes them and deliberately *not* the way the kit's matcher models them.

Every case is written as a delimited text file (ppm, intensity) with ``key: value`` header
comments (solvent, spectrometer frequency), exactly what a user exports from processing
software, and goes through the kit's public path: reader -> observe -> compare -> rank.

What differs from the matcher's own assumptions (``cageprint.techniques.nmr``):

- line shapes: Lorentzian, Gaussian or pseudo-Voigt, 0.5-3 Hz wide at 75-150 MHz;
- intensity spread, one of two models (``INTENSITY_MODELS``, chosen per call of ``make_case``):
  ``"lognormal"`` (the default): orbit size x a log-normal factor (sigma 0.12-0.35) x a
  relaxation factor shared by the carbons of one kind (pentagon-junction carbons of a non-IPR
  cage relax differently), so areas are not Gaussian around the orbit size;
  ``"saturation"``: partial saturation, orbit size x (1 - exp(-TR/T1)) x a small noise factor,
  with a log-normal spread of T1 over the orbits, pentagon-junction carbons relaxing faster or
  slower as a kind, and a repetition time TR of 0.2-3 median T1 per spectrum -- areas skewed
  and bounded by the orbit size, unlike the matcher's Gaussian spread in log area;
- accidental coincidences: orbit shifts drawn from a smooth density with a chance of falling
  within 0.002-0.01 ppm of another orbit (unresolved), more likely as lines crowd;
- lock/solvent lines: the deuterium multiplets of C6D6, toluene-d8 or 1,2-dichlorobenzene-d4
  (1:1:1 triplets, J(C,D) 24-25 Hz) beside CS2, declared in the file (and by the user) in most
  cases, undeclared in some;
- a few impurity singlets, a rolling baseline, white noise with S/N 5-50 (median cage line
  height over noise sigma).

Sources: solvent 13C shifts and J(C,D) from Fulmer et al., Organometallics 2010, 29, 2176
(C6D6 128.06 t, J 24.3 Hz; toluene-d8 137.48 s, 128.87 t, 127.96 t, 125.13 t, J ~24 Hz);
1,2-dichlorobenzene-d4 (132.4 s, 130.1 t, 127.2 t) from memory; CS2 192.8 ppm (Gottlieb et al.,
J. Org. Chem. 1997, 62, 7512) lies outside the cage window.  Line shapes, relaxation spread and
noise: common practice, no source.  Partial saturation 1 - exp(-TR/T1): common practice, no
source; its T1 spreads and TR range are invented.  The fractions themselves are invented.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

#: lock solvents: (name, [(ppm, multiplicity n lines, J Hz)]) -- see the module sources
LOCKS: dict[str, list[tuple[float, int, float]]] = {
    "C6D6": [(128.06, 3, 24.3)],
    "toluene-d8": [(137.48, 1, 0.0), (128.87, 3, 23.9), (127.96, 3, 24.1), (125.13, 3, 24.2)],
    "1,2-dichlorobenzene-d4": [(132.39, 1, 0.0), (130.05, 3, 25.5), (127.19, 3, 25.0)],
}

#: the window the corpus writes (ppm)
WINDOW = (118.0, 168.0)


#: per-orbit area factors of one cage: (orbit sizes, orbit shifts ppm, IPR?) -> one factor per
#: orbit; the area of an orbit is share x size x factor
OrbitFactors = Callable[[tuple[int, ...], np.ndarray, bool], list[float]]


def _junction(ppm: float, ipr: bool) -> bool:
    """A pentagon-junction carbon: a line above 150 ppm of a non-IPR cage (see orbit_shifts)."""
    return ppm > 150.0 and not ipr


def _lognormal(rng: np.random.Generator) -> tuple[OrbitFactors, dict]:
    """Log-normal factor per orbit (sigma 0.12-0.35 per spectrum) x a junction factor 0.6-1.0
    per cage.  Draws from ``rng`` in the order the corpus always did (same seed, same bytes)."""
    spread = rng.uniform(0.12, 0.35)

    def factors(sizes: tuple[int, ...], shifts: np.ndarray, ipr: bool) -> list[float]:
        junction_factor = rng.uniform(0.6, 1.0)
        out = []
        for ppm in shifts:
            f = np.exp(rng.normal(0, spread))
            if _junction(float(ppm), ipr):
                f *= junction_factor
            out.append(f)
        return out

    return factors, {"spread": spread}


#: saturation model: range of TR / median T1 per spectrum (log-uniform; invented)
TR_RATIO = (0.2, 3.0)
#: saturation model: sigma of log T1 over the orbits of a spectrum (invented)
T1_SPREAD = (0.15, 0.5)
#: saturation model: T1 of pentagon-junction carbons / median T1, per cage (invented; either way)
JUNCTION_T1 = (0.4, 2.5)
#: saturation model: sigma of a small log-normal integration noise per orbit (invented)
SATURATION_NOISE = 0.03


def _saturation(rng: np.random.Generator) -> tuple[OrbitFactors, dict]:
    """Partial saturation: factor 1 - exp(-TR/T1) per orbit (x a small noise factor), T1
    log-normal around the spectrum's median (pentagon-junction carbons of a cage shifted as a
    kind), TR/T1_median 0.2-3 per spectrum.  Source: partial saturation 1 - exp(-TR/T1),
    common practice, no source; the ranges are invented.

    Draws from ``rng`` in step with ``_lognormal`` (one uniform per spectrum and per cage,
    one normal per orbit; the rest from a child generator), so a seed gives the same case
    under both models but for the line areas."""
    own = np.random.default_rng(int(rng.random() * 2 ** 53))
    tr_ratio = float(np.exp(own.uniform(np.log(TR_RATIO[0]), np.log(TR_RATIO[1]))))
    t1_spread = float(own.uniform(*T1_SPREAD))

    def factors(sizes: tuple[int, ...], shifts: np.ndarray, ipr: bool) -> list[float]:
        junction_t1 = float(np.exp(rng.uniform(np.log(JUNCTION_T1[0]), np.log(JUNCTION_T1[1]))))
        out = []
        for ppm in shifts:
            t1 = float(np.exp(rng.normal(0, t1_spread)))   # in units of the median T1
            if _junction(float(ppm), ipr):
                t1 *= junction_t1
            noise = float(np.exp(own.normal(0, SATURATION_NOISE)))
            out.append((1.0 - np.exp(-tr_ratio / t1)) * noise)
        return out

    return factors, {"tr_ratio": tr_ratio, "t1_spread": t1_spread}


#: intensity models by name: each takes the case's generator, draws its per-spectrum
#: parameters and returns (per-cage factor function, notes for ``Truth.notes``)
INTENSITY_MODELS: dict[str, Callable[[np.random.Generator], tuple[OrbitFactors, dict]]] = {
    "lognormal": _lognormal,
    "saturation": _saturation,
}


@dataclass(frozen=True)
class Truth:
    """What a corpus spectrum was made from."""

    formula: str
    ipr: bool
    isomers: tuple[int, ...]          # major first
    shares: tuple[float, ...]
    patterns: tuple[str, ...]
    solvent_declared: str
    lock: str
    snr: float
    mhz: float
    notes: dict = field(default_factory=dict)


def _shape(x: np.ndarray, x0: float, fwhm: float, kind: str, eta: float) -> np.ndarray:
    """Unit-area line shape on ``x`` (same units as ``fwhm``)."""
    g_sigma = fwhm / 2.3548
    lor = (fwhm / 2) / np.pi / ((x - x0) ** 2 + (fwhm / 2) ** 2)
    gau = np.exp(-0.5 * ((x - x0) / g_sigma) ** 2) / (g_sigma * np.sqrt(2 * np.pi))
    if kind == "lorentz":
        return lor
    if kind == "gauss":
        return gau
    return eta * lor + (1 - eta) * gau


def orbit_shifts(sizes: tuple[int, ...], rng: np.random.Generator, *, nonipr: bool,
                 crowd_p: float) -> np.ndarray:
    """One shift per orbit: a smooth density over 130-150 ppm (pentagon-junction carbons of
    non-IPR cages reach 150-160), with a chance of an accidental coincidence."""
    k = len(sizes)
    out = np.empty(k)
    for i in range(k):
        if i > 0 and rng.random() < crowd_p * min(1.0, k / 30):
            out[i] = out[rng.integers(0, i)] + rng.uniform(-0.004, 0.004)
        elif nonipr and rng.random() < 0.12:
            out[i] = rng.uniform(150.0, 160.0)
        else:
            out[i] = 140.0 + 4.5 * rng.standard_t(6)
    return np.clip(out, 124.0, 162.0)


def render(lines: list[tuple[float, float]], *, mhz: float, rng: np.random.Generator,
           snr: float, med_area: float) -> tuple[np.ndarray, np.ndarray]:
    """A full trace on WINDOW from (ppm, area per Hz) lines; the median cage line (area
    ``med_area``) stands ``snr`` noise sigmas tall."""
    hz_per_pt = rng.uniform(0.15, 0.35)
    npts = int((WINDOW[1] - WINDOW[0]) * mhz / hz_per_pt)
    x = np.linspace(WINDOW[0], WINDOW[1], npts)
    xhz = x * mhz
    y = np.zeros(npts)
    kind = str(rng.choice(["lorentz", "gauss", "voigt"], p=[0.5, 0.15, 0.35]))
    base_w = rng.uniform(0.5, 3.0)
    for ppm, area in lines:
        w = base_w * rng.uniform(0.8, 1.25)
        lo, hi = np.searchsorted(x, [ppm - 60 * w / mhz, ppm + 60 * w / mhz])
        y[lo:hi] += area * _shape(xhz[lo:hi], ppm * mhz, w, kind, rng.uniform(0.3, 0.8))
    sigma = med_area / (np.pi * base_w / 2) / snr
    t = (x - x.mean()) / np.ptp(x)
    roll = sigma * (rng.normal(0, 2) * t + rng.normal(0, 2) * t ** 2
                    + rng.uniform(0.5, 2.0) * np.sin(2 * np.pi * rng.uniform(0.5, 2) * t
                                                     + rng.uniform(0, 6.3)))
    y = y + roll + rng.normal(0, sigma, npts)
    if rng.random() < 0.3:  # exported high-to-low ppm, as many processing programs do
        x, y = x[::-1], y[::-1]
    return x, y


def to_text(x: np.ndarray, y: np.ndarray, *, solvent: str, mhz: float, title: str) -> bytes:
    head = [f"# title: {title}", f"# spectrometer frequency: {mhz:.2f}"]
    if solvent:
        head.append(f"# solvent: {solvent}")
    head.append("ppm,intensity")
    body = "\n".join(f"{a:.5f},{b:.6g}" for a, b in zip(x, y, strict=True))
    return ("\n".join(head) + "\n" + body + "\n").encode()


#: two cage lines closer than this (Hz) count as an unresolved pair in ``Truth.notes``: about
#: the corpus's median line width, so no picker can be expected to split them (invented bound)
UNRESOLVED_HZ = 2.0


def make_case(rng: np.random.Generator, formula: str, ipr: bool, pool: list,
              *, mixture: bool, intensity: str = "lognormal") -> tuple[bytes, Truth]:
    """One spectrum of ``formula``: a random true isomer from ``pool`` (candidates), or two.

    ``pool`` is a list of candidates with ``isomer``, ``nmr_sizes`` and ``pattern``;
    ``intensity`` names the area model in ``INTENSITY_MODELS``.
    """
    if intensity not in INTENSITY_MODELS:
        raise ValueError(f"unknown intensity model {intensity!r}; "
                         f"known: {', '.join(INTENSITY_MODELS)}")
    mhz = float(rng.choice([75.47, 100.6, 125.7, 150.9]))
    snr = float(np.exp(rng.uniform(np.log(5), np.log(50))))
    picks = [pool[int(rng.integers(len(pool)))]]
    shares = [1.0]
    if mixture:
        others = [c for c in pool if c.pattern != picks[0].pattern]
        picks.append(others[int(rng.integers(len(others)))])
        minor = float(rng.uniform(0.15, 0.5))
        shares = [1 - minor, minor]
    factors, model_notes = INTENSITY_MODELS[intensity](rng)
    lines: list[tuple[float, float]] = []
    heights_ref = []
    orbit_ppm = []
    for cand, share in zip(picks, shares, strict=True):
        sizes = tuple(cand.nmr_sizes)
        shifts = orbit_shifts(sizes, rng, nonipr=not ipr, crowd_p=0.08)
        orbit_ppm.append(tuple(round(float(q), 6) for q in shifts))
        for s, ppm, f in zip(sizes, shifts, factors(sizes, shifts, ipr), strict=True):
            lines.append((float(ppm), share * s * f))
            heights_ref.append(share * s * f)
    med_area = float(np.median(heights_ref))
    cage_ppm = np.sort([ppm for ppm, _ in lines])
    unresolved = int(np.sum(np.diff(cage_ppm) * mhz < UNRESOLVED_HZ))
    lock = str(rng.choice(["", "C6D6", "C6D6", "toluene-d8", "1,2-dichlorobenzene-d4"]))
    if lock:
        strength = med_area * rng.uniform(1.0, 6.0)
        for ppm, mult, j in LOCKS[lock]:
            if mult == 1:
                lines.append((ppm, strength * 0.5))
            else:
                for k in (-1, 0, 1):
                    lines.append((ppm + k * j / mhz, strength))
    for _ in range(int(rng.integers(0, 3))):  # impurity singlets
        lines.append((float(rng.uniform(125, 155)), med_area * rng.uniform(0.1, 0.5)))
    declared = "CS2" + (f" + {lock}" if lock else "")
    undeclared = bool(lock) and rng.random() < 0.15
    if undeclared:
        declared = "CS2"
    x, y = render(lines, mhz=mhz, rng=rng, snr=snr, med_area=med_area)
    truth = Truth(formula=formula, ipr=ipr, isomers=tuple(c.isomer for c in picks),
                  shares=tuple(shares), patterns=tuple(c.pattern for c in picks),
                  solvent_declared=declared, lock=lock, snr=snr, mhz=mhz,
                  notes={"undeclared_lock": undeclared, "intensity": intensity,
                         "unresolved_pairs": unresolved, "orbit_ppm": tuple(orbit_ppm),
                         **model_notes})
    return to_text(x, y, solvent=declared, mhz=mhz, title=f"corpus {formula}"), truth
