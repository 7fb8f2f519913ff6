"""Write the demo scenario's files: seeded synthetic spectra plus ``truth.json``.

Deterministic for a given :data:`SEED` and generator version: each file has its
own random stream (seeded from the seed and the file name), so regenerating
gives identical bytes.  NMR lines sit on the real carbon orbits of each cage
(from :func:`cageprint.symmetry.fingerprint`) at invented chemical shifts.
"""

from __future__ import annotations

import hashlib
import json
import os
import pathlib
import zlib

import numpy as np

from ..cage import iter_isomers
from ..errors import CageprintError
from ..fileio import atomic_write_text
from ..symmetry import fingerprint
from . import synth
from .scenario import FRACTIONS, LAB, SOOT_EXTRACT, SYNTHETIC_NOTE, CageTruth, Fraction

#: bump when the generated files change in any way
GENERATOR_VERSION = "2"
#: the scenario's seed
SEED = 20261201
#: FWHM of the synthetic 13C lines, ppm
NMR_FWHM = 0.03
#: one pair of orbits per NMR fraction is put this close (an unresolved pair), ppm
UNRESOLVED_PPM = 0.004
CS2_PPM = 192.8   # CS2 13C line, ppm (Fulmer et al., Organometallics 2010; from memory)


def _rng(name: str) -> np.random.Generator:
    return np.random.default_rng([SEED, zlib.crc32(name.encode())])


def _cage(t: CageTruth):
    """The cage of a truth entry, checked against the point group the scenario expects."""
    for cage in iter_isomers(t.n, ipr=True):
        if cage.isomer == t.isomer:
            fp = fingerprint(cage)
            if fp.point_group != t.point_group:
                raise CageprintError(
                    f"demo scenario: C{t.n} IPR isomer {t.isomer} has point group "
                    f"{fp.point_group}, the scenario expects {t.point_group}"
                )
            return cage, fp
    raise CageprintError(f"demo scenario: C{t.n} has no IPR isomer {t.isomer}")


def _header(frac_or_title, technique: str, extra: dict | None = None) -> dict:
    title = frac_or_title if isinstance(frac_or_title, str) else frac_or_title.title
    h = {"TITLE": f"{title} ({technique})", "ORIGIN": LAB, "OWNER": "public domain (synthetic)",
         "$SYNTHETIC": SYNTHETIC_NOTE}
    h.update(extra or {})
    return h


#: invented shifts are drawn at least this far apart (ppm), across all cages of a fraction
MIN_SEPARATION_PPM = 0.3


def _nmr_shifts(rng, k: int, taken: list[float]) -> np.ndarray:
    """Invented shifts for k orbits in the sp2 cage region, apart from each other and ``taken``."""
    out: list[float] = []
    while len(out) < k:
        s = float(rng.uniform(131.0, 152.0))
        if all(abs(s - o) >= MIN_SEPARATION_PPM for o in out + taken):
            out.append(s)
    taken.extend(out)
    return np.array(out)


def _nmr_file(frac: Fraction, path: pathlib.Path) -> dict:
    rng = _rng(path.name)
    x = np.linspace(120.0, 200.0, 20001)
    y = np.zeros_like(x)
    orbit_truth = []
    taken: list[float] = []
    for ci, t in enumerate(frac.cages):
        cage, fp = _cage(t)
        sizes = np.array(fp.nmr.sizes, float)
        if t.inside == "Sc3N" and sizes.size == 2:
            shifts = np.array([144.5, 137.3])  # invented, near the region reported for this cage
        else:
            shifts = _nmr_shifts(rng, sizes.size, taken)
        pair = None
        if ci == 0 and sizes.size > 4:
            i, j = 1, 3  # an unresolved pair: two orbits nearly on top of each other
            shifts[j] = shifts[i] + UNRESOLVED_PPM
            pair = [float(shifts[i]), float(shifts[j])]
        heights = 0.25 * sizes * t.share * rng.uniform(0.95, 1.05, sizes.size)
        y += synth.lines(x, shifts, heights, NMR_FWHM)
        orbit_truth.append({"isomer": t.isomer, "shifts_ppm": [round(float(s), 4) for s in shifts],
                            "sizes": [int(s) for s in sizes], "unresolved_pair_ppm": pair})
    impurity = float(rng.uniform(128.0, 129.0))
    y += synth.lines(x, [CS2_PPM, impurity], [3.0, 0.3], [0.05, NMR_FWHM])
    y += 0.02 + 0.0004 * (x - 120.0) + 0.03 * synth.gauss(x, 160.0, 40.0)
    y += synth.noise(rng, x.size, 0.01)
    synth.write_jcamp(path, x, y, _header(frac, "13C NMR", {
        "DATA TYPE": "NMR SPECTRUM", "DATA CLASS": "XYDATA", "XUNITS": "PPM",
        "YUNITS": "ARBITRARY UNITS", ".OBSERVE NUCLEUS": "^13C", ".OBSERVE FREQUENCY": "150.9",
        ".SOLVENT NAME": frac.solvent, "SAMPLE DESCRIPTION": frac.title}))
    return {"orbits": orbit_truth, "solvent_ppm": [CS2_PPM], "impurity_ppm": [round(impurity, 3)]}


# C60: IR-active T1u bands, cm-1 (Kraetschmer et al., Nature 1990; from memory)
C60_IR = (527.0, 577.0, 1183.0, 1429.0)
# C60: Raman-active 2Ag + 8Hg, cm-1 (Bethune et al., Chem. Phys. Lett. 1991; from memory)
C60_RAMAN = (273.0, 433.0, 496.0, 709.0, 772.0, 1099.0, 1250.0, 1424.0, 1469.0, 1574.0)


def _ir_file(frac: Fraction, path: pathlib.Path) -> dict:
    rng = _rng(path.name)
    x = np.linspace(400.0, 2000.0, 3201)
    y = synth.lines(x, C60_IR, rng.uniform(0.2, 0.8, 4), 5.0)
    y += synth.lines(x, [667.0, 669.5], [0.25, 0.18], 1.5)  # atmospheric CO2 bend (artefact)
    y += 0.05 + 3e-5 * (x - 400.0) + synth.noise(rng, x.size, 0.004)
    synth.write_jcamp(path, x, y, _header(frac, "IR", {
        "DATA TYPE": "INFRARED SPECTRUM", "XUNITS": "1/CM", "YUNITS": "ABSORBANCE",
        "SAMPLE DESCRIPTION": "KBr pellet (synthetic)"}))
    return {"bands_cm1": list(C60_IR), "artefacts_cm1": [667.0, 669.5]}


def _raman_file(frac: Fraction, path: pathlib.Path) -> dict:
    rng = _rng(path.name)
    x = np.linspace(200.0, 1800.0, 3201)
    h = rng.uniform(0.15, 0.6, len(C60_RAMAN))
    h[C60_RAMAN.index(1469.0)] = 1.0  # the pentagonal pinch mode dominates
    y = synth.lines(x, C60_RAMAN, h, 6.0)
    y += 0.1 + 0.08 * synth.gauss(x, 1000.0, 1500.0) + synth.noise(rng, x.size, 0.006)
    synth.write_jcamp(path, x, y, _header(frac, "Raman", {
        "DATA TYPE": "RAMAN SPECTRUM", "XUNITS": "1/CM", "YUNITS": "ARBITRARY UNITS",
        "$LASER WAVELENGTH": "785 nm (synthetic)"}))
    return {"bands_cm1": list(C60_RAMAN)}


# UV-vis bands, nm: C60 in hexane 257, 329, 404 (from memory); the C76 bands are invented.
UV_BANDS = {60: ((257.0, 1.0, 30.0), (329.0, 0.6, 30.0), (404.0, 0.05, 8.0), (540.0, 0.02, 90.0)),
            76: ((325.0, 0.9, 50.0), (405.0, 0.35, 40.0), (490.0, 0.2, 50.0),
                 (575.0, 0.12, 60.0), (660.0, 0.08, 50.0), (745.0, 0.05, 50.0))}


def _uv_file(frac: Fraction, path: pathlib.Path) -> dict:
    rng = _rng(path.name)
    x = np.linspace(250.0, 900.0, 1301)
    bands = UV_BANDS[frac.cages[0].n]
    y = synth.lines(x, [b[0] for b in bands], [b[1] for b in bands], [b[2] for b in bands],
                    shape="gauss")
    y += 0.02 * (300.0 / x) ** 4 + synth.noise(rng, x.size, 0.002)
    synth.write_jcamp(path, x, y, _header(frac, "UV-vis", {
        "DATA TYPE": "UV/VIS SPECTRUM", "XUNITS": "NANOMETERS", "YUNITS": "ABSORBANCE",
        ".SOLVENT NAME": frac.solvent}))
    return {"bands_nm": [b[0] for b in bands]}


def _species_mass(formula: str) -> tuple[float, int, int]:
    """(monoisotopic neutral mass, carbons, nitrogens) for C_n, C_nO or Sc3N@C_n."""
    if formula.startswith("Sc3N@C"):
        n = int(formula[6:])
        return 3 * synth.MASS["Sc"] + synth.MASS["N"] + 12.0 * n, n, 1
    if formula.endswith("O"):
        n = int(formula[1:-1])
        return 12.0 * n + 15.99491462, n, 0  # 16O (from memory)
    n = int(formula[1:])
    return 12.0 * n, n, 0


def _mass_file(species: dict[str, float], title: str, path: pathlib.Path,
               lo: float = 300.0, hi: float = 1200.0, doubly: str | None = None) -> dict:
    rng = _rng(path.name)
    x = np.arange(lo, hi + 1e-9, 0.02)
    y = np.zeros_like(x)
    ions = []
    for formula, amount in species.items():
        m, nc, nn = _species_mass(formula)
        env = synth.cage_envelope(nc, nn)
        for z, frac in ((1, 1.0), (2, 0.04)):
            if z == 2 and formula != doubly:
                continue
            mz0 = (m - z * synth.ELECTRON) / z
            cen = mz0 + np.arange(env.size) * synth.M13C_SHIFT / z
            y += synth.lines(x, cen, 1000.0 * amount * frac * env / env.max(), mz0 / 8000.0,
                             shape="gauss")
            ions.append({"formula": formula, "charge": z, "mz_mono": round(float(mz0), 5)})
    y += 5.0 * np.exp(-(x - lo) / 150.0) + np.abs(synth.noise(rng, x.size, 1.5))
    synth.write_csv(path, x, y, [title, LAB, SYNTHETIC_NOTE, "positive ions, profile data"])
    return {"ions": ions}


def generate(out: str | os.PathLike) -> dict:
    """Write every demo file into ``out`` and return the truth table (also ``truth.json``).

    Examples
    --------
    >>> from cageprint.demo import generate  # doctest: +SKIP
    >>> truth = generate("demo-data")                   # doctest: +SKIP
    """
    out = pathlib.Path(out)
    out.mkdir(parents=True, exist_ok=True)
    truth = {"lab": LAB, "note": SYNTHETIC_NOTE, "seed": SEED,
             "generator_version": GENERATOR_VERSION, "fractions": {}}
    soot = _mass_file(SOOT_EXTRACT, "toluene soot extract", out / "soot-extract-ms.csv",
                      doubly="C60")
    truth["soot_extract"] = {"file": "soot-extract-ms.csv",
                             "species": dict(SOOT_EXTRACT), **soot}
    for frac in FRACTIONS:
        files, details = {}, {}
        for tech in frac.techniques:
            ext = "csv" if tech == "mass" else "jdx"
            name = f"fraction-{frac.code}-{tech}.{ext}"
            path = out / name
            if tech == "mass":
                main = frac.formula
                species = {main: 1.0}
                if frac.cages[0].inside:
                    species["Sc3N@C78"] = 0.05  # an invented minor endohedral impurity
                details[tech] = _mass_file(species, frac.title, path, 600.0, 1200.0)
            else:
                details[tech] = {"nmr": _nmr_file, "ir": _ir_file, "raman": _raman_file,
                                 "uvvis": _uv_file}[tech](frac, path)
            files[tech] = name
        truth["fractions"][frac.code] = {
            "title": frac.title, "retention_min": frac.retention_min, "solvent": frac.solvent,
            "formula": frac.formula, "cage_formula": f"C{frac.cages[0].n}", "charge": 1,
            "cages": [{"n": c.n, "isomer": c.isomer, "point_group": c.point_group,
                       "share": c.share, "inside": c.inside} for c in frac.cages],
            "files": files, "details": details, "notes": frac.notes,
        }
    atomic_write_text(out / "truth.json", json.dumps(truth, indent=1, sort_keys=True) + "\n")
    manifest = {"generator_version": GENERATOR_VERSION, "seed": SEED,
                "files": {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
                          for p in sorted(out.iterdir())
                          if p.is_file() and p.name != "manifest.json"}}
    atomic_write_text(out / "manifest.json",
                      json.dumps(manifest, indent=1, sort_keys=True) + "\n")
    return truth
