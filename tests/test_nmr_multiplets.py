"""Lock and solvent multiplets in 13C spectra (issue 10).

Sources: solvent shifts from Fulmer et al., Organometallics 2010, 29, 2176 (C6D6 128.06,
CDCl3 77.16, acetone-d6 29.84 and 206.26 ppm); multiplicities from spin-1 deuterium (2nI + 1
lines: CD 1:1:1, CD3 1:3:6:7:6:3:1), common practice, no source; J(C,D) values from memory
(C6D6 24.3, CDCl3 32.0, acetone-d6 CD3 19.4 Hz).  Cage line positions are invented.
"""

from __future__ import annotations

import numpy as np
import pytest

from cageprint.spectra import Spectrum
from cageprint.techniques.nmr import observe_nmr
from cageprint.techniques.nmr_solvents import find_deuterium_triplets

#: (solvent, [(centre ppm, lines, J Hz)]) as the tests expect them, written out by hand
MULTIPLETS = {
    "C6D6": [(128.06, 3, 24.3)],
    "CDCl3": [(77.16, 3, 32.0)],
    "acetone-d6": [(29.84, 7, 19.4), (206.26, 1, 0.0)],
}
CAGE = [131.2, 135.9, 138.4, 141.7, 143.3, 144.9, 147.0, 149.6]


def _trace(lines, mhz, seed, lo=0.0, hi=220.0):
    """Lorentzian lines (ppm, height) 1 Hz wide on a 0.5 Hz grid, plus a little noise."""
    x = np.arange(lo * mhz, hi * mhz, 0.5) / mhz
    y = np.zeros_like(x)
    hw = 0.5 / mhz  # half width at half maximum, ppm
    for p, h in lines:
        i0, i1 = np.searchsorted(x, [p - 200 * hw, p + 200 * hw])
        y[i0:i1] += h / (1 + ((x[i0:i1] - p) / hw) ** 2)
    y += np.random.default_rng(seed).normal(0, 0.01, x.size)
    return Spectrum(x, y, technique="nmr", meta={"observe_mhz": mhz})


def _multiplet(centre, n, j, mhz, height):
    w = {1: [1], 3: [1, 1, 1], 5: [1, 2, 3, 2, 1], 7: [1, 3, 6, 7, 6, 3, 1]}[n]
    return [(centre + (k - (n - 1) / 2) * j / mhz, height * wk / max(w))
            for k, wk in enumerate(w)]


@pytest.mark.parametrize("mhz", [75.47, 125.7, 150.9])
@pytest.mark.parametrize("solvent", ["C6D6", "CDCl3", "acetone-d6"])
def test_whole_multiplet_is_excluded(solvent, mhz):
    solvent_lines = [q for c, n, j in MULTIPLETS[solvent] for q in _multiplet(c, n, j, mhz, 8.0)]
    s = _trace([(p, 1.0) for p in CAGE] + solvent_lines, mhz, seed=int(mhz))
    obs = observe_nmr(s, solvent=f"CS2 + {solvent}", region=(0.0, 220.0), snr=5)
    assert sorted(round(p, 1) for p in obs.positions) == [round(p, 1) for p in CAGE]
    reasons = {round(e["position"], 3): e["reason"] for e in obs.excluded}
    for p, _h in solvent_lines:
        hit = [r for q, r in reasons.items() if abs(q - p) < 0.01]
        assert hit and "reference/solvent line" in hit[0], (p, reasons)


@pytest.mark.parametrize("mhz", [100.6, 125.7])
def test_undeclared_triplet_is_flagged_and_left_out_unless_kept(mhz):
    lines = [(p, 1.0) for p in CAGE] + _multiplet(128.06, 3, 24.3, mhz, 6.0)
    s = _trace(lines, mhz, seed=3, lo=118.0, hi=165.0)
    obs = observe_nmr(s, solvent="CS2")          # the C6D6 lock is not declared
    assert len(obs.positions) == len(CAGE)
    (flag,) = obs.diagnostics["unlisted_multiplets"]
    assert abs(flag["centre"] - 128.06) < 0.01 and abs(flag["spacing_hz"] - 24.3) < 0.6
    kept = observe_nmr(s, solvent="CS2", keep_unlisted_multiplets=True)
    assert len(kept.positions) == len(CAGE) + 3
    assert kept.diagnostics["unlisted_multiplets"]


def test_solvent_named_in_the_file_is_used():
    # JCAMP ##.SOLVENT NAME or a delimited 'solvent:' comment lands in meta["solvent"]
    mhz = 125.7
    s = _trace([(p, 1.0) for p in CAGE] + _multiplet(128.06, 3, 24.3, mhz, 6.0), mhz, seed=4,
               lo=118.0, hi=165.0)
    s = s.replace(meta={**s.meta, "solvent": "C6D6"})
    obs = observe_nmr(s)
    assert len(obs.positions) == len(CAGE)
    assert obs.diagnostics["solvent_from_file"] == "C6D6"
    assert "unlisted_multiplets" not in obs.diagnostics


def test_cage_lines_are_rarely_taken_for_a_triplet():
    # 19 and 42 random cage lines (invented), 400 draws: a false 1:1:1 C-D triplet in at
    # most 1 % of spectra (equal spacing, equal areas and a centre near a CD solvent carbon)
    rng = np.random.default_rng(10)
    hits = 0
    for k in range(400):
        n = 19 if k % 2 else 42
        pos = list(140 + 4.5 * rng.standard_t(6, n))
        area = list(np.exp(rng.normal(0, 0.25, n)) * 2)
        hits += bool(find_deuterium_triplets(pos, area, 125.7))
    assert hits <= 4, hits
