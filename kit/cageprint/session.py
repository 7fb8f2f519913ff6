"""A headless assignment session: spectra, formula, candidates, thresholds, weights, ranking.

The widgets are a thin layer over this object; scripts and the command line
use it directly.  It recomputes only what a change affects:

* a technique's observation is cached, and dropped when that technique's
  spectrum or one of its observation thresholds changes;
* comparisons are cached per technique and per candidate *signature* (the
  part of the fingerprint the technique looks at: orbit sizes, mode
  counts...), so candidates with equal signatures are compared once and
  tie exactly; they are dropped when that technique's observation or
  comparison options change, or the candidates change;
* the ranking is rebuilt from cached verdicts (cheap) after any change.

``session.stats`` counts the work done (``"observe:nmr"``,
``"compare:ir"``, ``"rank"``...), so a change can be checked to recompute
only what it should.

Examples
--------
>>> from cageprint.evidence import Candidate
>>> from cageprint.spectra import Spectrum
>>> s = Session()
>>> s.set_candidates([Candidate("C60", 60, 1, "Ih", (60,), 4, 10, 0.757),
...                   Candidate("C60", 60, 2, "D5h", (20, 20, 10, 10), 9, 20, 0.2)])
>>> s.set_spectrum("ir", Spectrum([527, 577, 1183, 1429], [1, .4, .3, .35], technique="ir",
...                               kind="peaks"))
>>> [(r.rank, r.candidate.isomer, r.verdict) for r in s.ranking]
[(1, 1, 'consistent'), (2, 2, 'possible')]
"""

from __future__ import annotations

import functools
import inspect
import json
import re
from collections import Counter
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from .errors import FormulaError, SessionError
from .evidence import (
    DEFAULT_WEIGHTS,
    TECHNIQUE_ORDER,
    Candidate,
    Ranking,
    TechniqueVerdict,
    _plain,
    mass_verdict,
    no_data,
    rank,
)
from .spectra import Spectrum
from .techniques import electronic, nmr, vibrational

__all__ = ["Session", "parse_cage_formula", "as_peak_list_if_sparse", "SESSION_FORMAT"]

#: tag written into saved sessions
SESSION_FORMAT = "cageprint-session/1"

_FORMULA = re.compile(r"^\s*(?:(?P<inner>[A-Za-z0-9()]+)\s*@\s*)?C(?P<n>\d+)\s*$")


def parse_cage_formula(formula: str) -> tuple[int, str | None]:
    """Split ``"C78"`` or ``"Sc3N@C80"`` into (cage carbons, inner cluster or None).

    Examples
    --------
    >>> parse_cage_formula("Sc3N@C80")
    (80, 'Sc3N')
    >>> parse_cage_formula("C60")
    (60, None)
    """
    m = _FORMULA.match(str(formula))
    if not m:
        raise FormulaError(f"formula {formula!r}: expected a cage such as 'C78' or "
                           "'Sc3N@C80'")
    n = int(m.group("n"))
    if n < 20 or n % 2 or n == 22:
        raise FormulaError(f"formula {formula!r}: a fullerene cage has an even number of "
                           f"carbons, 20 or 24 and up; got {n}")
    return n, m.group("inner")


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


def _observe_mass(spectrum: Any, **options: Any):
    from .techniques.mass import observe_mass

    return observe_mass(spectrum, **options)


def _compare_mass(candidate: Candidate, observation: Any, **_options: Any) -> TechniqueVerdict:
    return mass_verdict(candidate, observation)


_OBSERVE: dict[str, Callable[..., Any]] = {
    "mass": _observe_mass,
    "nmr": nmr.observe_nmr,
    "ir": vibrational.observe_vibrational,
    "raman": vibrational.observe_vibrational,
    "uvvis": electronic.observe_uvvis,
}
_COMPARE: dict[str, Callable[..., TechniqueVerdict]] = {
    "mass": _compare_mass,
    "nmr": nmr.compare_nmr,
    "ir": vibrational.compare_vibrational,
    "raman": vibrational.compare_vibrational,
    "uvvis": electronic.compare_uvvis,
}


@functools.lru_cache(maxsize=64)
def _param_names(fn: Callable[..., Any]) -> frozenset[str]:
    if fn is _observe_mass:
        try:
            from .techniques.mass import observe_mass
        except ImportError:
            return frozenset()
        fn = observe_mass
    params = inspect.signature(fn).parameters.values()
    return frozenset(p.name for p in params if (p.kind == p.KEYWORD_ONLY
                     or (p.kind == p.POSITIONAL_OR_KEYWORD and p.default is not p.empty))
                     and p.name not in _INTERNAL)


#: comparison arguments the session fills itself (not user thresholds)
_INTERNAL = frozenset({"partners"})


def _check_technique(technique: str) -> str:
    if technique not in TECHNIQUE_ORDER:
        raise SessionError(f"technique {technique!r} is not one of "
                           f"{', '.join(TECHNIQUE_ORDER)}")
    return technique


class _hybrid:
    """Call on the class: restore a saved session; on an instance: load a spectrum."""

    def __init__(self, on_class: Callable[..., Any], on_instance: Callable[..., Any]):
        self.on_class, self.on_instance = on_class, on_instance
        self.__doc__ = on_instance.__doc__

    def __get__(self, obj: Any, cls: type) -> Callable[..., Any]:
        if obj is None:
            return self.on_class.__get__(cls, cls)
        return self.on_instance.__get__(obj, cls)


class Session:
    """Headless state of one assignment, recomputing only what a change affects.

    Parameters
    ----------
    formula : str, optional
        Cage formula (``"C78"``, ``"Sc3N@C80"``).
    cage_charge : int, optional
        Formal charge of the cage (-6 for Sc3N@C80: six electrons from the
        cluster); default from the formula (0 for an empty cage).
    weights : mapping, optional
        Technique weights (see :data:`cageprint.evidence.DEFAULT_WEIGHTS`).

    Notes
    -----
    The public API (what the widgets use): :meth:`set_formula`,
    :meth:`set_candidates`, :meth:`load` / :meth:`set_spectrum` /
    :meth:`unload`, :meth:`set_threshold`, :meth:`thresholds`,
    :meth:`set_weight`, :attr:`weights`, :attr:`ranking`,
    :meth:`observation`, :meth:`comparison`, :attr:`stats`,
    :meth:`to_dict` / :meth:`from_dict`, :meth:`save` and ``Session.load(path)``
    (called on the class, it restores a saved session).
    """

    def __init__(self, formula: str | None = None, *, cage_charge: int | None = None,
                 weights: Mapping[str, float] | None = None) -> None:
        self.formula: str | None = None
        self.n: int | None = None
        self.cage_charge = 0
        self.ipr: bool | None = None
        self.candidates: tuple[Candidate, ...] = ()
        self._partners: list[tuple[tuple[int, ...], str]] | None = None
        self.spectra: dict[str, Spectrum] = {}
        self.sources: dict[str, str] = {}
        self._thresholds: dict[str, dict[str, Any]] = {t: {} for t in TECHNIQUE_ORDER}
        self._weights: dict[str, float] = dict(DEFAULT_WEIGHTS)
        self._obs: dict[str, Any] = {}
        self._cmp: dict[str, dict[Any, TechniqueVerdict]] = {t: {} for t in TECHNIQUE_ORDER}
        self._ranking: Ranking | None = None
        self.stats: Counter[str] = Counter()
        self.sample: str = ""
        for t, w in (weights or {}).items():
            self.set_weight(t, w)
        if formula is not None:
            self.set_formula(formula, cage_charge=cage_charge)

    # ------------------------------------------------------------ formula, candidates

    def set_formula(self, formula: str, *, cage_charge: int | None = None) -> None:
        """Set the cage formula; drops the candidates (call :meth:`set_candidates`).

        ``cage_charge`` is the formal charge of the cage; by default it comes
        from the formula (:func:`cageprint.techniques.mass.cage_charge`: -6 for
        Sc3N@C80, 0 for an empty cage).
        """
        n, inner = parse_cage_formula(formula)
        if cage_charge is None:
            cage_charge = 0
            if inner:
                from .techniques.mass import cage_charge as _formal_charge

                cage_charge = _formal_charge(formula.strip())
        if formula == self.formula and n == self.n and int(cage_charge) == self.cage_charge:
            return
        self.cage_charge = int(cage_charge)
        self.formula = formula.strip()
        self.n = n
        self.candidates = ()
        self._partners = None
        self._drop_comparisons()

    def set_candidates(self, candidates: Iterable[Candidate] | None = None, *,
                       ipr: bool = True, progress: bool = False) -> None:
        """Set the candidate cages.

        With no ``candidates``, every isomer of the formula (IPR only when
        ``ipr``) is generated with its fingerprint.  Comparisons are dropped.
        """
        if candidates is None:
            if self.n is None:
                raise SessionError("set_candidates: no formula set; call "
                                   "set_formula('C78') first or pass candidates")
            from .cage import iter_isomers

            built = []
            for cage in iter_isomers(self.n, ipr=ipr, progress=progress):
                built.append(Candidate.from_cage(cage, charge=self.cage_charge,
                                                 formula=self.formula))
            self.ipr = bool(ipr)
            self.stats["fingerprint"] += len(built)
            candidates = built
        else:
            candidates = list(candidates)
            for c in candidates:
                if not isinstance(c, Candidate):
                    raise SessionError(f"set_candidates: expected Candidate objects; got "
                                       f"{type(c).__name__}")
            if candidates and self.formula is None:
                self.formula, self.n = candidates[0].formula, candidates[0].n
        self.candidates = tuple(candidates)
        self._partners = None
        self._drop_comparisons()

    # ------------------------------------------------------------ spectra

    def _load_spectrum(self, technique: str, source: Any, *, format: str | None = None,
                       name: str | None = None, **options: Any) -> Spectrum:
        """Read a spectrum (path, bytes or Spectrum) for a technique and use it.

        ``format`` and ``options`` go to :func:`cageprint.spectra.load_spectrum`.
        """
        _check_technique(technique)
        if isinstance(source, Spectrum):
            spectrum = source
        else:
            from .spectra import load_spectrum

            spectrum = load_spectrum(source, format=format, technique=technique, **options)
            if name is None and isinstance(source, (str, Path)):
                name = Path(source).name
        self.set_spectrum(technique, spectrum, name=name)
        return spectrum

    def set_spectrum(self, technique: str, spectrum: Spectrum, *,
                     name: str | None = None) -> None:
        """Use an already-read spectrum for a technique.

        A short, irregularly spaced "profile" (a plain two-column peak list)
        is taken as a peak list (see :func:`as_peak_list_if_sparse`).
        """
        _check_technique(technique)
        if not isinstance(spectrum, Spectrum):
            raise SessionError(f"set_spectrum: expected a Spectrum; got "
                               f"{type(spectrum).__name__}")
        if spectrum.technique != technique:
            raise SessionError(f"set_spectrum({technique!r}): the spectrum is a "
                               f"{spectrum.technique!r} spectrum")
        spectrum = as_peak_list_if_sparse(spectrum)
        self.spectra[technique] = spectrum
        self.sources[technique] = name or str(spectrum.meta.get("source", "") or
                                              spectrum.meta.get("origin", "") or "")
        self._drop_observation(technique)
        if technique == "mass" and self.formula is None:
            self._formula_from_mass()

    def unload(self, technique: str) -> None:
        """Forget a technique's spectrum (it becomes "no data")."""
        _check_technique(technique)
        self.spectra.pop(technique, None)
        self.sources.pop(technique, None)
        self._drop_observation(technique)

    def _formula_from_mass(self) -> None:
        obs = self.observation("mass")
        species = [sp for sp in getattr(obs, "species", ()) or ()
                   if getattr(sp, "kind", "cage") != "fragment"]
        species.sort(key=lambda sp: -float(getattr(sp, "relative_abundance", 0.0)))
        for sp in species:
            cn = getattr(sp, "cage_n", None)
            if cn:
                formula = str(getattr(sp, "formula", f"C{cn}"))
                try:
                    parse_cage_formula(formula)
                except FormulaError:
                    formula = f"C{cn}"
                self.set_formula(formula, cage_charge=getattr(sp, "cage_charge", None))
                return

    # ------------------------------------------------------------ thresholds, weights

    def threshold_names(self, technique: str) -> dict[str, str]:
        """Settable names of a technique -> ``"observe"`` or ``"compare"``."""
        _check_technique(technique)
        out = {n: "compare" for n in _param_names(_COMPARE[technique])}
        out.update({n: "observe" for n in _param_names(_OBSERVE[technique])})
        return out

    def set_threshold(self, technique: str, name: str, value: Any) -> None:
        """Set one observation threshold or comparison option of a technique.

        An observation threshold drops that technique's observation and
        comparisons; a comparison option drops only its comparisons.  Other
        techniques keep their caches.  ``value=None`` restores the default.
        """
        names = self.threshold_names(technique)
        if name not in names:
            raise SessionError(f"set_threshold({technique!r}, {name!r}): unknown name; "
                               f"expected one of {', '.join(sorted(names))}")
        current = self._thresholds[technique]
        if value is None:
            if name not in current:
                return
            current.pop(name)
        else:
            if isinstance(value, list):
                value = tuple(value)
            if current.get(name, object()) == value:
                return
            current[name] = value
        if names[name] == "observe":
            self._drop_observation(technique)
        else:
            self._cmp[technique] = {}
            self._ranking = None

    def thresholds(self, technique: str | None = None) -> dict[str, Any]:
        """Thresholds set (non-default) for one technique, or all of them."""
        if technique is None:
            return {t: dict(v) for t, v in self._thresholds.items()}
        _check_technique(technique)
        return dict(self._thresholds[technique])

    @property
    def weights(self) -> dict[str, float]:
        """The weight of each technique in the overall score (a copy)."""
        return dict(self._weights)

    def set_weight(self, technique: str, value: float) -> None:
        """Set a technique's weight; only the (cheap) ranking is redone."""
        _check_technique(technique)
        value = float(value)
        if not np.isfinite(value) or value < 0:
            raise SessionError(f"set_weight({technique!r}): weight must be a finite "
                               f"number >= 0; got {value}")
        if self._weights[technique] != value:
            self._weights[technique] = value
            self._ranking = None

    # ------------------------------------------------------------ results

    def observation(self, technique: str) -> Any:
        """The technique's observation (cached), or None with no spectrum."""
        _check_technique(technique)
        if technique not in self.spectra:
            return None
        if technique not in self._obs:
            opts = {k: v for k, v in self._thresholds[technique].items()
                    if k in _param_names(_OBSERVE[technique])}
            self.stats[f"observe:{technique}"] += 1
            self._obs[technique] = _OBSERVE[technique](self.spectra[technique], **opts)
        return self._obs[technique]

    def comparison(self, technique: str, candidate: Candidate | int) -> TechniqueVerdict:
        """One technique's verdict on one candidate (a Candidate, or its isomer number)."""
        _check_technique(technique)
        if not isinstance(candidate, Candidate):
            matches = [c for c in self.candidates if c.isomer == int(candidate)]
            if not matches:
                raise SessionError(f"comparison: isomer {candidate} is not among the "
                                   f"{len(self.candidates)} candidates")
            candidate = matches[0]
        obs = self.observation(technique)
        if obs is None:
            return no_data(technique)
        key = candidate.signature(technique)
        cache = self._cmp[technique]
        if key not in cache:
            opts = self._compare_options(technique)
            self.stats[f"compare:{technique}"] += 1
            cache[key] = _COMPARE[technique](candidate, obs, **opts)
        return cache[key]

    def _compare_options(self, technique: str) -> dict[str, Any]:
        names = _param_names(_COMPARE[technique])
        opts = {k: v for k, v in self._thresholds[technique].items() if k in names}
        if technique == "nmr" and "partners" not in opts:
            if self._partners is None:
                self._partners = self._nmr_partners()
            opts["partners"] = self._partners
        return opts

    def _nmr_partners(self) -> list[tuple[tuple[int, ...], str]]:
        """Distinct 13C patterns of the candidates, labelled, for the mixture search."""
        groups: dict[tuple[int, ...], list[Candidate]] = {}
        for c in self.candidates:
            if c.nmr_sizes:
                groups.setdefault(c.nmr_sizes, []).append(c)
        out = []
        for sizes, cs in groups.items():
            if len(cs) == 1:
                label = cs[0].label
            else:
                shown = ", ".join(str(c.isomer) for c in cs[:6])
                more = f" and {len(cs) - 6} more" if len(cs) > 6 else ""
                groups_pg = "/".join(sorted({c.point_group for c in cs}))
                label = f"{cs[0].formula} isomers {shown}{more} ({groups_pg})"
            out.append((sizes, label))
        return out

    def verdicts(self, technique: str) -> list[TechniqueVerdict]:
        """Verdicts of one technique for every candidate, in candidate order."""
        _check_technique(technique)
        obs = self.observation(technique)
        if obs is None:
            return [no_data(technique)] * len(self.candidates)
        cache = self._cmp[technique]
        compare = _COMPARE[technique]
        opts = None
        out = []
        for c in self.candidates:
            key = c.signature(technique)
            v = cache.get(key)
            if v is None:
                if opts is None:
                    opts = self._compare_options(technique)
                self.stats[f"compare:{technique}"] += 1
                v = cache[key] = compare(c, obs, **opts)
            out.append(v)
        return out

    @property
    def ranking(self) -> Ranking:
        """The ranked candidate table (rebuilt only after a change)."""
        if self._ranking is None:
            if not self.candidates:
                raise SessionError("ranking: no candidates; call set_formula('C78') and "
                                   "set_candidates(ipr=True) first")
            verdicts = {t: self.verdicts(t) for t in TECHNIQUE_ORDER if t in self.spectra}
            self.stats["rank"] += 1
            self._ranking = rank(self.candidates, verdicts, self._weights)
        return self._ranking

    # ------------------------------------------------------------ invalidation

    def _drop_observation(self, technique: str) -> None:
        self._obs.pop(technique, None)
        self._cmp[technique] = {}
        self._ranking = None

    def _drop_comparisons(self) -> None:
        for t in TECHNIQUE_ORDER:
            self._cmp[t] = {}
        self._ranking = None

    # ------------------------------------------------------------ save / load

    def to_dict(self) -> dict[str, Any]:
        """Everything needed to rebuild the session (spectra inline, candidates included)."""
        spectra = {}
        for t, s in self.spectra.items():
            spectra[t] = {
                "x": s.x.tolist(), "y": s.y.tolist(), "technique": s.technique,
                "x_unit": s.x_unit, "y_unit": s.y_unit, "kind": s.kind,
                "widths": None if s.widths is None else s.widths.tolist(),
                "meta": json.loads(json.dumps(_plain(dict(s.meta)), default=str)),
                "source": self.sources.get(t, ""),
            }
        return {
            "format": SESSION_FORMAT, "sample": self.sample, "formula": self.formula,
            "cage_charge": self.cage_charge, "ipr": self.ipr,
            "thresholds": _plain(self._thresholds), "weights": dict(self._weights),
            "candidates": [c.to_dict() for c in self.candidates], "spectra": spectra,
        }

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Session:
        """Rebuild a session from :meth:`to_dict` output."""
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
            spec = Spectrum(sd["x"], sd["y"], technique=sd["technique"], x_unit=sd["x_unit"],
                            y_unit=sd["y_unit"], kind=sd["kind"], widths=sd.get("widths"),
                            meta=sd.get("meta", {}))
            s.spectra[t] = spec
            s.sources[t] = sd.get("source", "")
        for t, th in d.get("thresholds", {}).items():
            for k, v in th.items():
                s.set_threshold(t, k, v)
        return s

    def save(self, path: str | Path) -> Path:
        """Write the session as JSON, atomically (a failed save keeps the old file)."""
        from .report import atomic_write_text

        return atomic_write_text(path, json.dumps(self.to_dict(), indent=1))

    def _restore(cls, path: str | Path) -> Session:  # noqa: N805 - bound by _hybrid
        from .report import read_json

        return cls.from_dict(read_json(path, "session file"))

    load = _hybrid(classmethod(_restore), _load_spectrum)

    def load_spectrum(self, technique: str, source: Any, **options: Any) -> Spectrum:
        """Read a spectrum for a technique (the same as ``session.load(technique, ...)``)."""
        return self._load_spectrum(technique, source, **options)

    # ------------------------------------------------------------ convenience

    def techniques_with_data(self) -> tuple[str, ...]:
        return tuple(t for t in TECHNIQUE_ORDER if t in self.spectra)

    def __repr__(self) -> str:
        data = ", ".join(self.techniques_with_data()) or "no spectra"
        return (f"Session({self.formula or 'no formula'}, {len(self.candidates)} candidates, "
                f"{data})")
