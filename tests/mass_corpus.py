"""An independent generator of mass spectra for the mass tests and benchmark.

Kept apart from the kit on purpose: isotope lines come from IsoSpecPy (its own
element table; only the 13C probability is set by the caller), formulas are
given as element counts (the kit's formula parser is not used), and the peak
shape is this module's own: an asymmetric pseudo-Voigt with a tail towards
high m/z, as time-of-flight peaks have (common practice, no source), or a plain
Gaussian.  The noise is additive Gaussian plus a counting-like term that grows
with the square root of the signal, on a gently curved baseline.  Everything is
seeded; every spectrum is invented.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cageprint.spectra.model import Spectrum

#: electron mass in u (CODATA 2018: 5.48579909065e-4 u; from memory)
ELECTRON = 5.48579909065e-4

#: the ladder species of the benchmark: name -> element counts (the names are what the kit
#: should report); abundances are invented
LADDER = {
    "C60": {"C": 60},
    "C70": {"C": 70},
    "C76": {"C": 76},
    "C78": {"C": 78},
    "C84": {"C": 84},
    "C58": {"C": 58},
    "C60O": {"C": 60, "O": 1},
    "C70O": {"C": 70, "O": 1},
    "Sc3N@C80": {"Sc": 3, "N": 1, "C": 80},
    "La@C82": {"La": 1, "C": 82},
    "Y@C82": {"Y": 1, "C": 82},
    "Gd@C82": {"Gd": 1, "C": 82},
}


def isotope_lines(counts: dict[str, int], c13: float | None = None):
    """Fine-structure masses and probabilities (IsoSpecPy; 13C probability ``c13``).

    ``c13=None`` keeps IsoSpecPy's own carbon composition (13C = 0.010788).
    """
    import IsoSpecPy  # test-only oracle

    table = IsoSpecPy.PeriodicTbl
    elements = sorted(counts)
    masses, probs = [], []
    for e in elements:
        m = list(table.symbol_to_masses[e])
        p = list(table.symbol_to_probs[e])
        if e == "C" and c13 is not None:
            p = [1.0 - c13, c13]
        masses.append(m)
        probs.append(p)
    dist = IsoSpecPy.IsoTotalProb(
        1 - 1e-9, atomCounts=[counts[e] for e in elements], isotopeMasses=masses,
        isotopeProbabilities=probs,
    )
    m = np.array(list(dist.masses))
    p = np.array(list(dist.probs))
    keep = p > 1e-7
    return m[keep], p[keep]


def line_shape(x, centre, fwhm, *, shape="voigt", tail=1.0, eta=0.0):
    """One line of unit area.  ``shape``: "gauss", or "voigt" (pseudo-Voigt with Lorentzian
    share ``eta`` and a right half ``tail`` times wider than the left half)."""
    d = x - centre
    if shape == "gauss":
        s = fwhm / 2.3548200450309493
        return np.exp(-0.5 * (d / s) ** 2) / (s * 2.5066282746310002)
    half_l, half_r = fwhm / (1 + tail), fwhm * tail / (1 + tail)  # halves add to the FWHM
    h = np.where(d < 0, half_l, half_r)
    u = d / h
    prof = (1 - eta) * np.exp(-np.log(2) * u**2) + eta / (1 + u**2)
    # area of the two halves: each half contributes h * (gauss or lorentz half-area)
    area = (half_l + half_r) * ((1 - eta) * 0.5 * np.sqrt(np.pi / np.log(2)) + eta * np.pi / 2)
    return prof / area


@dataclass(frozen=True)
class Species:
    name: str
    charge: int
    amount: float
    lines_mz: np.ndarray
    lines_p: np.ndarray
    apex: float = 0.0          # tallest point of its own noise-free profile
    snr: float = 0.0           # apex / additive noise sd

    @property
    def mz_range(self) -> tuple[float, float]:
        big = self.lines_p > 0.01 * self.lines_p.max()
        return float(self.lines_mz[big].min()), float(self.lines_mz[big].max())


@dataclass(frozen=True)
class Case:
    spectrum: Spectrum
    species: tuple[Species, ...]
    resolving_power: float
    polarity: str
    offset: float
    scale_ppm: float
    noise_sd: float
    seed: int


def render(species_spec, *, resolving_power, polarity="positive", c13=None, noise=0.003,
           shot=0.01, offset=0.0, scale_ppm=0.0, shape="voigt", tail=1.3, eta=0.15,
           points_per_fwhm=12.0, baseline=0.0, seed=0) -> Case:
    """Render ``species_spec`` = [(name, counts, charge, amount), ...] as a profile.

    ``amount`` is the integrated intensity of the whole envelope; ``noise`` the additive sd as a
    fraction of the tallest point, ``shot`` a counting-like sd of ``shot * sqrt(y * ymax)``;
    ``offset`` (m/z) and ``scale_ppm`` the calibration error (measured = true * (1 + scale_ppm
    1e-6) + offset); ``baseline`` a curved baseline height as a fraction of the tallest point.
    """
    rng = np.random.default_rng(seed)
    sign = -1 if polarity.startswith("neg") else 1
    built = []
    for name, counts, z, amount in species_spec:
        zs = sign * abs(z)
        m, p = isotope_lines(counts, c13)
        mz = (m - zs * ELECTRON) / abs(zs)
        mz = mz * (1 + scale_ppm * 1e-6) + offset
        built.append((name, zs, amount, mz, p))
    all_mz = np.concatenate([b[3] for b in built])
    lo, hi = float(all_mz.min()) - 15.0, float(all_mz.max()) + 15.0
    step = lo / resolving_power / points_per_fwhm
    x = np.arange(lo, hi, step)

    def profile(mz, p, amount):
        y = np.zeros_like(x)
        for c, a in zip(mz, p, strict=True):
            fw = c / resolving_power
            i0, i1 = np.searchsorted(x, [c - 25 * fw, c + 25 * fw])
            y[i0:i1] += amount * a * line_shape(x[i0:i1], c, fw, shape=shape, tail=tail, eta=eta)
        return y

    parts = [profile(b[3], b[4], b[2]) for b in built]
    clean = np.sum(parts, axis=0)
    top = float(clean.max())
    sd = noise * top
    base = baseline * top * (0.3 + 0.7 * np.exp(-(x - lo) / (0.3 * (hi - lo))))
    y = clean + base + 4 * sd + rng.normal(0.0, sd, x.size)
    if shot > 0:
        y = y + rng.normal(0.0, 1.0, x.size) * shot * np.sqrt(np.maximum(clean, 0.0) * top)
    y = np.maximum(y, 0.0)
    species = tuple(
        Species(name, zs, amount, mz, p, apex=float(part.max()), snr=float(part.max()) / sd)
        for (name, zs, amount, mz, p), part in zip(built, parts, strict=True)
    )
    spectrum = Spectrum(x, y, technique="mass", kind="profile",
                        meta={"polarity": "negative" if sign < 0 else "positive",
                              "title": "invented test spectrum"})
    return Case(spectrum, species, float(resolving_power), spectrum.meta["polarity"], offset,
                scale_ppm, sd, seed)


def ladder_case(seed: int, resolving_power: float, polarity: str) -> Case:
    """A seeded fullerene-extract spectrum: C60 and C70 plus a random subset of the ladder."""
    rng = np.random.default_rng(10_000 + seed)
    spec = [("C60", LADDER["C60"], 1, 1.0), ("C70", LADDER["C70"], 1, float(rng.uniform(0.3, 0.9)))]
    others = [k for k in LADDER if k not in ("C60", "C70")]
    pick = rng.choice(len(others), size=int(rng.integers(3, 8)), replace=False)
    for i in sorted(pick):
        name = others[int(i)]
        # log-uniform, 2 % .. 60 % of C60 (C84 somewhat stronger, as in extracts; invented)
        amount = float(np.exp(rng.uniform(np.log(0.02), np.log(0.6))))
        spec.append((name, LADDER[name], 1, amount))
    if rng.random() < 0.3:  # a doubly charged C60 now and then
        spec.append(("C60", LADDER["C60"], 2, float(rng.uniform(0.05, 0.3))))
    return render(
        spec, resolving_power=resolving_power, polarity=polarity,
        noise=float(rng.uniform(0.001, 0.006)), shot=float(rng.uniform(0.0, 0.02)),
        offset=float(rng.uniform(-0.3, 0.3)), scale_ppm=float(rng.uniform(-30, 30)),
        tail=float(rng.uniform(1.0, 1.6)), eta=float(rng.uniform(0.0, 0.3)),
        points_per_fwhm=float(rng.uniform(6, 30)), baseline=float(rng.uniform(0, 0.03)),
        seed=seed,
    )


@dataclass(frozen=True)
class Score:
    present: int          # species above the detection threshold (apex S/N >= snr)
    found: int            # of those, reported with the right formula and charge
    listed: int           # of those not found, listed as unexplained near their m/z
    false: int            # reported species not in the truth
    unexplained: int      # unexplained envelopes listed
    spurious: int         # unexplained envelopes near no true species
    missed: tuple[str, ...] = ()
    false_names: tuple[str, ...] = ()


def score(case: Case, obs, snr: float = 5.0) -> Score:
    """Compare an observation with the truth of ``case``."""
    truth = {(s.name, s.charge) for s in case.species}
    got = {(s.formula, s.charge) for s in obs.species}
    unexpl = list(getattr(obs, "unexplained", ()) or ())
    present = [s for s in case.species if s.snr >= snr]
    found = [s for s in present if (s.name, s.charge) in got]
    listed = 0
    missed = []
    for s in present:
        if (s.name, s.charge) in got:
            continue
        lo, hi = s.mz_range
        fw = hi / case.resolving_power
        if any(lo - 2 * fw - 0.5 <= u.mz <= hi + 2 * fw + 0.5 for u in unexpl):
            listed += 1
        missed.append(f"{s.name}{s.charge:+d}(S/N {s.snr:.0f})")
    false = sorted(f"{f}{z:+d}" for f, z in got - truth)

    def near(u):
        for s in case.species:
            lo, hi = s.mz_range
            fw = hi / case.resolving_power
            if lo - 2 * fw - 0.5 <= u.mz <= hi + 2 * fw + 0.5:
                return True
        return False

    spurious = sum(1 for u in unexpl if not near(u))
    return Score(len(present), len(found), listed, len(false), len(unexpl), spurious,
                 tuple(missed), tuple(false))
