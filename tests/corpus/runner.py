"""Run corpus cases through the kit's public path and score the outcome against the truth.

Used by ``tests/benchmarks/bench_accuracy.py`` (the whole corpus, printed as a table) and
``tests/test_accuracy_slice.py`` (a small seeded slice).  The corpus intensity model
(``nmr13c.INTENSITY_MODELS``) is chosen by the environment variable
``CAGEPRINT_CORPUS_INTENSITY`` (default ``lognormal``) or per call.
"""

from __future__ import annotations

import math
import os
import time
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from cageprint import Session
from cageprint.api import candidates as make_candidates
from cageprint.techniques import nmr, nmr_match, nmr_pairs

from . import nmr13c

#: IPR formulas and how often each is drawn (the larger lists are the hard cases)
IPR_FORMULAS = ("C60", "C70", "C76", "C78", "C80", "C82", "C84", "C86", "C88", "C90",
                "C92", "C94", "C96", "C98", "C100")
#: non-IPR endohedral formulas (all isomers are candidates)
NONIPR_FORMULAS = ("Sc2@C66", "Sc3N@C68")
#: environment variable naming the corpus intensity model
INTENSITY_ENV = "CAGEPRINT_CORPUS_INTENSITY"
#: band edges of the kit's first-group share for ``reliability`` (bands < 50 %, 50-90 %,
#: 90-99 %, >= 99 %; chosen for reading, no source)
SHARE_BANDS = (0.5, 0.9, 0.99)


@dataclass(frozen=True)
class Outcome:
    """How one case came out."""

    seed: int
    truth: nmr13c.Truth
    in_first: bool            # the (major) true isomer is in the first-rank group
    first_size: int
    first_same_pattern: bool  # every first-rank member has one pattern
    ruled_out: bool           # a true isomer (major or minor) was ruled out
    partner_named: bool       # mixtures: the minor isomer's pattern is named as partner
    seconds: float
    first_share: float = 0.0  # the kit's posterior share of its first-rank group (0 if none)


_POOLS: dict[tuple[str, bool], list] = {}


def pool(formula: str, ipr: bool) -> list:
    """Candidates of a formula (built once per process)."""
    key = (formula, ipr)
    if key not in _POOLS:
        _POOLS[key] = make_candidates(formula, ipr=ipr)
    return _POOLS[key]


def true_pool(formula: str, ipr: bool) -> list:
    """Isomers a true fraction is drawn from: any IPR isomer; for non-IPR endohedral
    formulas, cages of symmetry order >= 4 (isolated endohedral cages are symmetric)."""
    cands = pool(formula, ipr)
    if ipr:
        return cands
    low = {"C1", "Ci", "Cs", "C2"}
    return [c for c in cands if c.point_group not in low]


def intensity_model(name: str | None = None) -> str:
    """The corpus intensity model: ``name``, else ``$CAGEPRINT_CORPUS_INTENSITY``, else
    ``"lognormal"``; an unknown name raises ``ValueError``."""
    model = name or os.environ.get(INTENSITY_ENV, "").strip() or "lognormal"
    if model not in nmr13c.INTENSITY_MODELS:
        raise ValueError(f"{INTENSITY_ENV}={model!r} is not one of "
                         f"{', '.join(nmr13c.INTENSITY_MODELS)}")
    return model


def case_spec(seed: int) -> tuple[str, bool, bool]:
    """(formula, ipr, mixture) of case ``seed``: 70 % IPR, 30 % non-IPR; 35 % mixtures
    (IPR formulas with at least two patterns only)."""
    rng = np.random.default_rng([seed, 1])
    if rng.random() < 0.3:
        return str(rng.choice(NONIPR_FORMULAS)), False, False
    formula = str(rng.choice(IPR_FORMULAS))
    mixture = rng.random() < 0.35 and len({c.pattern for c in pool(formula, True)}) > 1
    return formula, True, mixture


def _partner_named(row, truth: nmr13c.Truth) -> bool:
    if len(truth.isomers) < 2:
        return True
    v = row.verdicts.get("nmr")
    second = (v.details.get("second_component") or {}) if v is not None else {}
    if second.get("pattern") == truth.patterns[1]:
        return True
    partner = getattr(row, "partner", None)
    return partner is not None and getattr(partner, "isomer", partner) == truth.isomers[1]


def make(seed: int, intensity: str | None = None) -> tuple[bytes, nmr13c.Truth]:
    """Case ``seed``'s spectrum (text) and truth, areas by ``intensity_model(intensity)``."""
    formula, ipr, mixture = case_spec(seed)
    rng = np.random.default_rng([seed, 2])
    return nmr13c.make_case(rng, formula, ipr, true_pool(formula, ipr), mixture=mixture,
                            intensity=intensity_model(intensity))


def session_for(seed: int, text: bytes, truth: nmr13c.Truth,
                settings: dict | None = None) -> Session:
    """A session with the case's candidates, its declared solvent, NMR ``settings`` and its
    spectrum loaded (the ranking is computed when first asked for)."""
    s = Session(truth.formula)
    s.set_candidates(pool(truth.formula, truth.ipr))
    s.set_threshold("nmr", "solvent", truth.solvent_declared)
    for name, value in (settings or {}).items():
        s.set_threshold("nmr", name, value)
    s.load("nmr", text, name=f"corpus-{seed}.csv")
    return s


def run_case(seed: int, settings: dict | None = None, *,
             intensity: str | None = None) -> Outcome:
    """Make case ``seed`` (intensity model as ``intensity_model(intensity)``), rank it through
    a session and score it against its truth."""
    text, truth = make(seed, intensity)
    t0 = time.perf_counter()
    ranking = session_for(seed, text, truth, settings).ranking
    dt = time.perf_counter() - t0
    first = ranking.top()
    members = {r.candidate.isomer for r in first}
    major_row = ranking.row(truth.isomers[0])
    out = any(ranking.row(i).ruled_out for i in truth.isomers)
    return Outcome(
        seed=seed, truth=truth, in_first=truth.isomers[0] in members, first_size=len(first),
        first_same_pattern=len({r.candidate.pattern for r in first}) <= 1,
        ruled_out=out, partner_named=_partner_named(major_row, truth), seconds=dt,
        first_share=float(sum(r.share for r in first)))


#: an orbit counts as carried by an observed line this close (ppm; about 2 Hz at 100 MHz)
ORBIT_MATCH_PPM = 0.02


def _fit_costs(obs, n_orbits: int, spread: float) -> tuple:
    """The costs tuple the 13C comparison fits with at its default settings (as
    ``compare_nmr`` assembles it; ``test_accuracy_slice`` checks the two agree)."""
    return ((spread, nmr.NMR_MAX_MERGE, nmr.NMR_MERGE_COST, nmr.NMR_IMPURITY_COST,
             nmr.NMR_IMPURITY_STRENGTH_COST, nmr.NMR_MISSING_COST)
            + nmr_match._detection(obs, True) + (nmr_match._crowding(obs, n_orbits),))


def true_picks(sizes, orbit_ppm, positions) -> list:
    """The true assignment: each orbit to the nearest observed line within
    ``ORBIT_MATCH_PPM`` (else unseen); per line, orbit counts per distinct size (largest
    first), or None for a line no orbit made."""
    values = sorted(set(sizes), reverse=True)
    pos = np.asarray(positions, float)
    picks = [[0] * len(values) for _ in range(pos.size)]
    for size, ppm in zip(sizes, orbit_ppm, strict=True):
        j = int(np.argmin(np.abs(pos - ppm))) if pos.size else -1
        if j >= 0 and abs(pos[j] - ppm) < ORBIT_MATCH_PPM:
            picks[j][values.index(size)] += 1
    return [tuple(k) if sum(k) else None for k in picks]


def explain_miss(seed: int, *, intensity: str | None = None) -> dict:
    """Why a single-isomer case ranks another pattern first: the kit's cost of the true
    pattern, the cost of the true assignment of lines to its orbits (same terms, same
    spread: :func:`cageprint.techniques.nmr_pairs.assignment_cost`) and the first row's
    cost.  If the true assignment costs less than the kit's fit of the true pattern, the
    search missed it; if it costs more than the first row, the model prefers the winner."""
    text, truth = make(seed, intensity)
    s = session_for(seed, text, truth)
    ranking, obs = s.ranking, s.observation("nmr")
    row = ranking.row(truth.isomers[0])
    v = row.verdicts["nmr"]
    sizes = tuple(row.candidate.nmr_sizes)
    picks = true_picks(sizes, truth.notes["orbit_ppm"][0], obs.positions)
    logs = [math.log(a) for a in obs.integrals]
    spread = v.details["spread"]
    costs = _fit_costs(obs, len(sizes), spread)
    tols = nmr_match.tols_at(spread, nmr_match.line_noise(obs))
    return {"kit": float(v.details["cost"]),
            "true assignment": nmr_pairs.assignment_cost(sizes, logs, tols, picks, costs),
            "first row": float(-ranking.rows[0].score),
            "unseen orbits": len(sizes) - sum(sum(k) for k in picks if k is not None)}


def run(seeds: range, settings: dict | None = None, *,
        intensity: str | None = None) -> Iterator[Outcome]:
    for seed in seeds:
        yield run_case(seed, settings, intensity=intensity)


def summary(outcomes: list[Outcome]) -> dict[str, dict[str, float]]:
    """Figures per group ("single IPR", "single non-IPR", "mixtures", "all")."""
    groups = {
        "single IPR": [o for o in outcomes if len(o.truth.isomers) == 1 and o.truth.ipr],
        "single non-IPR": [o for o in outcomes if len(o.truth.isomers) == 1 and not o.truth.ipr],
        "mixtures": [o for o in outcomes if len(o.truth.isomers) == 2],
        "all": outcomes,
    }
    out = {}
    for name, g in groups.items():
        if not g:
            continue
        out[name] = {
            "cases": len(g),
            "true in first group": float(np.mean([o.in_first for o in g])),
            "first group one pattern": float(np.mean([o.first_same_pattern for o in g])),
            "true ruled out": float(np.mean([o.ruled_out for o in g])),
            "partner named (minor >= 20 %)": _partner_rate(g),
            "mean first group size": float(np.mean([o.first_size for o in g])),
            "median s/case": float(np.median([o.seconds for o in g])),
        }
    return out


def _partner_rate(g: list[Outcome]) -> float:
    """Share of the mixtures in ``g`` with a minor share >= 20 % whose partner is named."""
    mix20 = [o for o in g if len(o.truth.isomers) == 2 and o.truth.shares[1] >= 0.2]
    return float(np.mean([o.partner_named for o in mix20])) if mix20 else float("nan")


def _kind(o: Outcome) -> str:
    if len(o.truth.isomers) == 2:
        return "mixtures"
    return "single IPR" if o.truth.ipr else "single non-IPR"


def by_resolution(outcomes: list[Outcome]) -> dict[str, dict[str, float]]:
    """The main figures split by whether the true spectrum has cage lines closer than
    ``nmr13c.UNRESOLVED_HZ`` (``Truth.notes["unresolved_pairs"]``): how much of what is
    missed comes from coincidences the corpus makes on purpose."""
    out = {}
    for kind in ("single IPR", "single non-IPR", "mixtures"):
        for label, test in (("resolved", lambda k: k == 0), ("unresolved", lambda k: k > 0)):
            g = [o for o in outcomes if _kind(o) == kind
                 and test(o.truth.notes.get("unresolved_pairs", 0))]
            if not g:
                continue
            out[f"{kind}, {label}"] = {
                "cases": len(g),
                "true in first group": float(np.mean([o.in_first for o in g])),
                "partner named (minor >= 20 %)": _partner_rate(g),
            }
    return out


def _band_label(k: int) -> str:
    edges = [f"{100 * e:g}" for e in SHARE_BANDS]
    if k == 0:
        return f"< {edges[0]} %"
    if k == len(SHARE_BANDS):
        return f">= {edges[-1]} %"
    return f"{edges[k - 1]}-{edges[k]} %"


def reliability(outcomes: list[Outcome]) -> dict[str, dict[str, float]]:
    """Does the kit's confidence hold?  Per band of ``first_share`` (``SHARE_BANDS``): the
    cases, how often the (major) true isomer is in the first group, and the mean share the
    kit gave its first group there (a calibrated kit has the two close).  Every band is
    listed; an empty band has NaN rates."""
    bands: list[list[Outcome]] = [[] for _ in range(len(SHARE_BANDS) + 1)]
    for o in outcomes:
        bands[sum(o.first_share >= e for e in SHARE_BANDS)].append(o)
    out = {}
    for k, g in enumerate(bands):
        out[_band_label(k)] = {
            "cases": len(g),
            "true in first group": (float(np.mean([o.in_first for o in g])) if g
                                    else math.nan),
            "mean first share": (float(np.mean([o.first_share for o in g])) if g
                                 else math.nan),
        }
    return out
