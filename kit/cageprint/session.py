"""A headless assignment session: spectra, formula, candidates, settings, weights, ranking.

The widgets are a thin layer over this object; scripts and the command line
use it directly.  Every technique comes from the registry
(:mod:`cageprint.techniques.registry`).  The session recomputes only what a
change affects:

* a technique's observation is cached, and dropped when that technique's
  spectrum or one of its observe-stage settings changes;
* comparisons are cached per technique and per candidate *signature* (the
  part of the candidate the technique looks at: orbit sizes, mode counts...),
  so candidates with equal signatures are compared once and tie exactly;
  they are dropped when that technique's observation or compare-stage
  settings change, or the candidates change;
* the ranking is rebuilt from cached verdicts (cheap) after any change.

``session.stats`` counts the work done (``"observe:nmr"``, ``"compare:ir"``,
``"rank"``, ``"fingerprint"``), so a change can be checked to recompute only
what it should.

Examples
--------
>>> from cageprint.spectra import Spectrum
>>> s = Session()
>>> s.set_candidates([Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757),
...                   Candidate("C60", 60, 2, "D5h", (20, 20, 10, 10), 9, 20, 0.2)])
>>> s.load("ir", Spectrum([527, 577, 1183, 1429], [1, .4, .3, .35], technique="ir",
...                       kind="peaks"))
Spectrum(...)
>>> [(r.rank, r.candidate.isomer, r.verdict) for r in s.ranking]
[(1, 1, 'consistent'), (2, 2, 'possible')]
"""

from __future__ import annotations

import json
import warnings
from collections import Counter
from collections.abc import Hashable, Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from .cage import iter_isomers
from .candidate import PAIRS_MEMO, Candidate, Known
from .errors import CageprintError, SessionError
from .evidence import Ranking, rank
from .formula import Formula, parse_cage_formula
from .plain import plain
from .report import atomic_write_text, read_json
from .session_schema import validate_session
from .settings import Settings
from .spectra import Spectrum, load_spectrum
from .symmetry import fingerprint
from .techniques import registry
from .techniques.mass import MassObservation
from .techniques.registry import CompareContext, Technique
from .verdict import TechniqueVerdict, no_data

__all__ = ["Session", "generate_candidates", "as_peak_list_if_sparse", "SESSION_FORMAT"]

#: tag written into saved sessions
SESSION_FORMAT = "cageprint-session/1"
#: a "profile" with at most this many, irregularly spaced points is read as a peak list
PEAK_LIST_MAX_POINTS = 400
#: spacing irregularity (std / mean of the x steps) above which points are not a trace
PEAK_LIST_IRREGULARITY = 0.2


def as_peak_list_if_sparse(spectrum: Spectrum) -> Spectrum:
    """Treat a short, irregularly spaced "profile" (a plain two-column peak list) as peaks.

    A delimited text file does not say whether it holds a sampled trace or a
    list of lines; a trace has many evenly spaced points, a peak list a few
    scattered ones.

    Examples
    --------
    >>> s = Spectrum([130.2, 131.9, 140.05, 147.3], [1, 1, 2, 1], technique="nmr")
    >>> as_peak_list_if_sparse(s).kind
    'peaks'
    >>> as_peak_list_if_sparse(Spectrum(np.arange(10.0), np.ones(10), technique="ir")).kind
    'profile'
    """
    if spectrum.kind != "profile" or len(spectrum) > PEAK_LIST_MAX_POINTS:
        return spectrum
    steps = np.diff(spectrum.x)
    if steps.size == 0:
        return spectrum.replace(kind="peaks", meta={**dict(spectrum.meta),
                                                    "read_as": "peak list (one point)"})
    irregular = float(np.std(steps) / (np.mean(steps) or 1.0))
    if irregular <= PEAK_LIST_IRREGULARITY:
        return spectrum
    return spectrum.replace(kind="peaks", meta={
        **dict(spectrum.meta),
        "read_as": f"peak list ({len(spectrum)} irregularly spaced points)"})


def generate_candidates(formula: Formula, *, ipr: bool = True,
                        progress: bool = False) -> tuple[Candidate, ...]:
    """Every isomer of a cage formula (IPR only when ``ipr``) as a Candidate.

    Fingerprints are computed at the cage charge of the formula; techniques
    with a ``predict`` hook add their prediction to ``candidate.extra``.
    """
    hooks = [t for t in registry.techniques() if t.predict is not None]
    out = []
    for cage in iter_isomers(formula.cage_n, ipr=ipr, progress=progress):
        fp = fingerprint(cage, charge=formula.cage_charge)
        extra = {t.key: t.predict(cage, fp) for t in hooks if t.predict is not None}
        # one numbering per list: IPR numbers in an IPR list, all-isomer numbers otherwise
        cand = Candidate.from_cage(cage, fp, charge=formula.cage_charge,
                                   formula=formula.text, extra=extra,
                                   numbering="ipr" if ipr else "all")
        # the cage is at hand: tables need not rebuild it for its fused-pentagon count
        cand.memo(PAIRS_MEMO, Known(cage.fused_pentagon_pairs))
        out.append(cand)
    return tuple(out)


class Session:
    """Headless state of one assignment, recomputing only what a change affects.

    Parameters
    ----------
    formula : str, optional
        Cage formula (``"C78"``, ``"Sc3N@C80"``).
    cage_charge : int, optional
        Formal charge of the cage (-6 for Sc3N@C80: six electrons from the
        cluster); default from the formula (:mod:`cageprint.formula`).
    weights : mapping, optional
        Technique weights (defaults: each technique's registry weight).
    """

    def __init__(self, formula: str | None = None, *, cage_charge: int | None = None,
                 weights: Mapping[str, float] | None = None) -> None:
        self.formula: str | None = None
        self.n: int | None = None
        self.cage_charge = 0
        self.ipr: bool | None = None
        self.candidates: tuple[Candidate, ...] = ()
        self.spectra: dict[str, Spectrum] = {}
        self.data: dict[str, Any] = {}
        self.sources: dict[str, str] = {}
        self.sample: str = ""
        self.stats: Counter[str] = Counter()
        self._settings: dict[str, Settings] = {}
        self._weights: dict[str, float] = {}
        self._obs: dict[str, Any] = {}
        self._cmp: dict[str, dict[Hashable, TechniqueVerdict]] = {}
        self._verdicts: dict[str, list[TechniqueVerdict]] = {}
        self._memo: dict[str, Any] = {}  # per candidate set (CompareContext.memo)
        self._ranking: Ranking | None = None
        for t, w in (weights or {}).items():
            self.set_weight(t, w)
        if formula is not None:
            self.set_formula(formula, cage_charge=cage_charge)

    # ------------------------------------------------------------ formula, candidates

    def set_formula(self, formula: str, *, cage_charge: int | None = None) -> None:
        """Set the cage formula; drops the candidates (call :meth:`set_candidates`).

        ``cage_charge`` is the formal charge of the cage; by default it comes
        from the formula (-6 for Sc3N@C80, 0 for an empty cage).
        """
        f = parse_cage_formula(formula, cluster_charge=None if cage_charge is None
                               else -int(cage_charge))
        if f.text == self.formula and f.cage_charge == self.cage_charge:
            return
        self.formula, self.n, self.cage_charge = f.text, f.cage_n, f.cage_charge
        self.candidates = ()
        self._drop_comparisons()

    def set_candidates(self, candidates: Iterable[Candidate] | None = None, *,
                       ipr: bool = True, progress: bool = False) -> None:
        """Set the candidate cages.

        With no ``candidates``, every isomer of the formula (IPR only when
        ``ipr``) is generated with its fingerprint.  Comparisons are dropped.
        """
        if candidates is None:
            if self.formula is None:
                raise SessionError("set_candidates: no formula set; call "
                                   "set_formula('C78') first or pass candidates")
            f = parse_cage_formula(self.formula, cluster_charge=-self.cage_charge)
            built = generate_candidates(f, ipr=ipr, progress=progress)
            self.ipr = bool(ipr)
            self.stats["fingerprint"] += len(built)
            self.candidates = built
        else:
            given = tuple(candidates)
            for c in given:
                if not isinstance(c, Candidate):
                    raise SessionError(f"set_candidates: expected Candidate objects; got "
                                       f"{type(c).__name__}")
            if given and self.formula is None:
                self.formula, self.n = given[0].formula, given[0].n
            self.candidates = given
        self._drop_comparisons()

    # ------------------------------------------------------------ inputs

    def load(self, technique: str | None, source: Any, *, format: str | None = None,
             name: str | None = None, **options: Any) -> Any:
        """Give the session a technique's input; the one way in.

        Parameters
        ----------
        technique : str or None
            A registered technique; None takes it from the file.
        source : path, bytes, Spectrum, or the technique's own data
            A path or bytes are read by :func:`cageprint.spectra.load_spectrum`
            (``format`` and ``options`` go to it); a short, irregularly spaced
            profile is taken as a peak list (:func:`as_peak_list_if_sparse`).
            A technique without a spectrum takes what its ``accept`` accepts.
        name : str, optional
            Source name shown in tables and records (default: the file name).

        Returns
        -------
        Spectrum or the accepted data.  Nothing changes when reading fails.
        """
        tech = None if technique is None else self._tech(technique)
        if tech is not None and not tech.needs_spectrum:
            if tech.accept is None:
                raise SessionError(f"load({tech.key!r}): this technique takes no input; it "
                                   "judges the candidates themselves")
            self.data[tech.key] = tech.accept(source)
            self.sources[tech.key] = name or ""
            self._drop_observation(tech.key)
            return self.data[tech.key]
        if isinstance(source, Spectrum):
            spectrum = source
        else:
            spectrum = load_spectrum(source, format=format,
                                     technique=None if tech is None else tech.key, **options)
            if name is None and isinstance(source, (str, Path)):
                name = Path(source).name
        key = spectrum.technique if tech is None else tech.key
        if spectrum.technique != key:
            raise SessionError(f"load({key!r}): the spectrum is a {spectrum.technique!r} "
                               "spectrum")
        self._tech(key)
        spectrum = as_peak_list_if_sparse(spectrum)
        self.spectra[key] = spectrum
        self.sources[key] = name or str(spectrum.meta.get("source", "") or
                                        spectrum.meta.get("origin", "") or "")
        self._drop_observation(key)
        if key == "mass" and self.formula is None:
            self._formula_from_mass()
        return spectrum

    def set_spectrum(self, technique: str, spectrum: Spectrum, *,
                     name: str | None = None) -> None:
        """Deprecated: use ``session.load(technique, spectrum, name=...)``."""
        warnings.warn("Session.set_spectrum is deprecated; use Session.load",
                      DeprecationWarning, stacklevel=2)
        if not isinstance(spectrum, Spectrum):
            raise SessionError(f"set_spectrum: expected a Spectrum; got "
                               f"{type(spectrum).__name__}")
        self.load(technique, spectrum, name=name)

    def load_spectrum(self, technique: str, source: Any, **options: Any) -> Any:
        """Deprecated: use ``session.load(technique, source, ...)``."""
        warnings.warn("Session.load_spectrum is deprecated; use Session.load",
                      DeprecationWarning, stacklevel=2)
        return self.load(technique, source, **options)

    def unload(self, technique: str) -> None:
        """Forget a technique's input (it becomes "no data")."""
        self._tech(technique)
        self.spectra.pop(technique, None)
        self.data.pop(technique, None)
        self.sources.pop(technique, None)
        self._drop_observation(technique)

    def _formula_from_mass(self) -> None:
        obs = self.observation("mass")
        if not isinstance(obs, MassObservation):
            return
        species = sorted((sp for sp in obs.species if sp.kind != "fragment"),
                         key=lambda sp: -sp.relative_abundance)
        for sp in species:
            try:
                f = parse_cage_formula(sp.formula, cluster_charge=-sp.cage_charge)
            except CageprintError:
                f = parse_cage_formula(f"C{sp.cage_n}")
            self.set_formula(f.text, cage_charge=f.cage_charge)
            return

    # ------------------------------------------------------------ settings, weights

    def _tech(self, technique: str) -> Technique:
        if technique not in registry.keys():
            raise SessionError(f"technique {technique!r} is not one of "
                               f"{', '.join(registry.keys())}")
        return registry.get(technique)

    def settings(self, technique: str) -> Settings:
        """The technique's settings in use (a frozen dataclass)."""
        tech = self._tech(technique)
        s = self._settings.get(technique)
        if s is None:
            s = self._settings[technique] = tech.settings()
        return s

    def set_settings(self, technique: str, settings: Settings) -> None:
        """Use a whole settings object; recomputes only what the changed stages affect."""
        tech = self._tech(technique)
        if not isinstance(settings, tech.settings):
            raise SessionError(f"set_settings({technique!r}): expected "
                               f"{tech.settings.__name__}; got {type(settings).__name__}")
        old = self.settings(technique)
        if settings == old:
            return
        self._settings[technique] = settings
        if settings.values("observe") != old.values("observe"):
            self._drop_observation(technique)
        else:
            self._drop_comparisons(technique)

    def threshold_names(self, technique: str) -> dict[str, str]:
        """Settable names of a technique -> ``"observe"`` or ``"compare"``."""
        return {k: s.stage for k, s in self._tech(technique).settings.specs().items()}

    def set_threshold(self, technique: str, name: str, value: Any) -> None:
        """Set one setting of a technique (``value=None`` restores its default).

        An observe-stage setting drops that technique's observation and
        comparisons; a compare-stage one only its comparisons.  Other
        techniques keep their caches.  Bad values raise a SettingsError
        naming the setting, the value and the valid range.
        """
        names = self.threshold_names(technique)
        if name not in names:
            raise SessionError(f"set_threshold({technique!r}, {name!r}): unknown name; "
                               f"expected one of {', '.join(sorted(names))}")
        current = self.settings(technique)
        if value is None:
            value = getattr(type(current)(), name)
        self.set_settings(technique, current.replace(**{name: value}))

    def thresholds(self, technique: str | None = None) -> dict[str, Any]:
        """The settings in use (defaults included) of one technique, or of all."""
        if technique is None:
            return {t: self.settings(t).values() for t in registry.keys()}
        return self.settings(technique).values()

    @property
    def weights(self) -> dict[str, float]:
        """The weight of each technique in the overall score (a copy)."""
        return {**registry.default_weights(), **self._weights}

    def set_weight(self, technique: str, value: float) -> None:
        """Set a technique's weight; only the (cheap) ranking is redone."""
        self._tech(technique)
        value = float(value)
        if not np.isfinite(value) or value < 0:
            raise SessionError(f"set_weight({technique!r}): weight must be a finite "
                               f"number >= 0; got {value}")
        if self.weights[technique] != value:
            self._weights[technique] = value
            self._ranking = None

    # ------------------------------------------------------------ results

    def has_data(self, technique: str) -> bool:
        """True when the technique has something to judge by (it is not "no data")."""
        tech = self._tech(technique)
        if tech.needs_spectrum:
            return technique in self.spectra
        return tech.accept is None or technique in self.data

    def observation(self, technique: str) -> Any:
        """The technique's observation (cached), or None with no data."""
        tech = self._tech(technique)
        if not self.has_data(technique):
            return None
        if technique not in self._obs:
            data = self.spectra.get(technique) if tech.needs_spectrum else \
                self.data.get(technique)
            self.stats[f"observe:{technique}"] += 1
            self._obs[technique] = tech.observe(data, self.settings(technique))
        return self._obs[technique]

    def verdicts(self, technique: str) -> list[TechniqueVerdict]:
        """Verdicts of one technique for every candidate, in candidate order."""
        tech = self._tech(technique)
        cached = self._verdicts.get(technique)
        if cached is not None:
            return cached
        if not self.has_data(technique):
            return [no_data(technique)] * len(self.candidates)
        obs = self.observation(technique)  # may be None for a technique that needs no input
        cache = self._cmp.setdefault(technique, {})
        before = len(cache)
        ctx = CompareContext(technique, obs, self.settings(technique), self.candidates,
                             memo=self._memo)
        out = registry.compare_all(tech, ctx, cache)
        self.stats[f"compare:{technique}"] += len(cache) - before
        self._verdicts[technique] = out
        return out

    def comparison(self, technique: str, candidate: Candidate | int) -> TechniqueVerdict:
        """One technique's verdict on one candidate (a Candidate, or its isomer number)."""
        if isinstance(candidate, Candidate):
            index = self.candidates.index(candidate)
        else:
            matches = [i for i, c in enumerate(self.candidates) if c.isomer == int(candidate)]
            if not matches:
                raise SessionError(f"comparison: isomer {candidate} is not among the "
                                   f"{len(self.candidates)} candidates")
            index = matches[0]
        return self.verdicts(technique)[index]

    @property
    def ranking(self) -> Ranking:
        """The ranked candidate table (rebuilt only after a change)."""
        if self._ranking is None:
            if not self.candidates:
                raise SessionError("ranking: no candidates; call set_formula('C78') and "
                                   "set_candidates(ipr=True) first")
            verdicts = {t: self.verdicts(t) for t in self.techniques_with_data()}
            self.stats["rank"] += 1
            self._ranking = rank(self.candidates, verdicts, self.weights)
        return self._ranking

    def techniques_with_data(self) -> tuple[str, ...]:
        """Registered techniques that have data, in display order."""
        return tuple(t for t in registry.keys() if self.has_data(t))

    # ------------------------------------------------------------ invalidation

    def _drop_observation(self, technique: str) -> None:
        self._obs.pop(technique, None)
        self._drop_comparisons(technique)

    def _drop_comparisons(self, technique: str | None = None) -> None:
        if technique is None:  # the candidates changed
            self._memo = {}
        for t in [technique] if technique else list(self._cmp) + list(self._verdicts):
            self._cmp.pop(t, None)
            self._verdicts.pop(t, None)
        self._ranking = None

    # ------------------------------------------------------------ save / restore

    def to_dict(self) -> dict[str, Any]:
        """Everything needed to rebuild the session (spectra inline, candidates included)."""
        spectra = {t: {**s.to_dict(), "source": self.sources.get(t, "")}
                   for t, s in self.spectra.items()}
        return {
            "format": SESSION_FORMAT, "sample": self.sample, "formula": self.formula,
            "cage_charge": self.cage_charge, "ipr": self.ipr,
            "thresholds": {t: plain(s.changed()) for t, s in self._settings.items()
                           if s.changed()},
            "weights": self.weights,
            "candidates": [c.to_dict() for c in self.candidates], "spectra": spectra,
            "data": {t: {"value": plain(v), "source": self.sources.get(t, "")}
                     for t, v in self.data.items()},
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any], where: str = "session record") -> Session:
        """Rebuild a session from :meth:`to_dict` output (checked by the session schema)."""
        validate_session(d, where)
        try:
            return cls._from_checked(d)
        except CageprintError:
            raise
        except (KeyError, TypeError, ValueError, AttributeError) as exc:
            raise SessionError(f"{where}: unreadable session ({type(exc).__name__}: "
                               f"{str(exc)[:120]})") from None

    @classmethod
    def _from_checked(cls, d: Mapping[str, Any]) -> Session:
        if d.get("format") != SESSION_FORMAT:
            raise SessionError(f"session record: expected format {SESSION_FORMAT!r}; got "
                               f"{d.get('format')!r}")
        s = cls(weights=d.get("weights"))
        s.sample = str(d.get("sample", ""))
        if d.get("formula"):
            s.set_formula(d["formula"], cage_charge=d.get("cage_charge", 0))
        s.set_candidates([Candidate.from_dict(c) for c in d.get("candidates", ())])
        s.ipr = d.get("ipr")
        for t, sd in d.get("spectra", {}).items():
            s.spectra[t] = Spectrum.from_dict(sd)
            s.sources[t] = sd.get("source", "")
        for t, dd in d.get("data", {}).items():
            s.load(t, dd["value"], name=dd.get("source", ""))
        for t, th in d.get("thresholds", {}).items():
            s.set_settings(t, s.settings(t).replace(**th))
        return s

    def save(self, path: str | Path) -> Path:
        """Write the session as JSON, atomically (a failed save keeps the old file)."""
        return atomic_write_text(path, json.dumps(self.to_dict(), indent=1))

    @classmethod
    def restore(cls, path: str | Path) -> Session:
        """Read a session written by :meth:`save`."""
        return cls.from_dict(read_json(path, "session file"), where=str(path))

    def __repr__(self) -> str:
        data = ", ".join(self.techniques_with_data()) or "no spectra"
        return (f"Session({self.formula or 'no formula'}, {len(self.candidates)} candidates, "
                f"{data})")
