"""A toy technique, added to the kit through the technique registry alone (one module).

It counts the "toy bands" of an invented spectrum kind and compares the count
with the number of distinct 13C orbit sizes of a candidate (a made-up
prediction: the point is the plumbing, not the science).  ``TOY`` is its one
registry entry; ``tests/test_registry.py`` registers it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from cageprint.candidate import Candidate
from cageprint.settings import SNR_CHOICES, Settings, setting
from cageprint.spectra import Spectrum
from cageprint.techniques.registry import CompareContext, Technique
from cageprint.verdict import TechniqueVerdict


@dataclass(frozen=True)
class ToySettings(Settings):
    technique = "toy"
    region: tuple[float, float] = setting((0.0, 100.0), kind="span", unit="a.u.", low=0.0,
                                          high=1000.0, control="span", help="toy window")
    snr: float = setting(5.0, help="minimum height of a toy band", low=0.1, high=1e4,
                         choices=SNR_CHOICES, control="choices")
    tolerance: int = setting(0, stage="compare", kind="int", low=0, high=10,
                             help="count difference still called consistent")


@dataclass(frozen=True)
class ToyObservation:
    positions: tuple[float, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"positions": list(self.positions)}


def observe(spectrum: Spectrum, settings: ToySettings) -> ToyObservation:
    lo, hi = settings.region
    return ToyObservation(tuple(float(x) for x, y in zip(spectrum.x, spectrum.y, strict=True)
                                if lo <= x <= hi and y >= settings.snr))


def predicted(candidate: Candidate) -> int:
    return len(set(candidate.nmr_sizes))


def compare(candidate: Candidate, context: CompareContext) -> TechniqueVerdict:
    k, p = len(context.observation.positions), predicted(candidate)
    off = abs(k - p)
    verdict = "consistent" if off <= context.settings.tolerance else "unlikely"
    return TechniqueVerdict("toy", -float(off), verdict,
                            (f"{k} toy bands observed, {p} predicted.",))


TOY = Technique("toy", "Toy band count", "Toy", "a.u.", ToySettings, observe,
                signature=predicted, compare=compare, predicted=predicted,
                tie_note=lambda c: f"same toy count ({predicted(c)})",
                marks=lambda obs: obs.positions, observed_noun="toy bands", weight=1.0,
                cli_flag="--toy")
