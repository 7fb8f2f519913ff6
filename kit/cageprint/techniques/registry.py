"""The technique registry: one record per technique, read by every layer above.

A :class:`Technique` says everything the session, the ranking, the widgets,
the report and the command line need to know about a technique: its key and
labels, x unit, settings type, how to observe a spectrum (or other data), how
to compare a candidate, what a candidate predicts (the number the live panel
shows), what part of a candidate the comparison depends on (its *signature*),
its default weight and its command-line option.

Adding a technique means one module (its settings dataclass, ``observe`` and
``compare``) and one :func:`register` call with its record; nothing else in
the kit lists techniques.

Examples
--------
>>> [t.label for t in techniques()]
['Mass spectrum', '13C NMR', 'IR', 'Raman', 'UV-vis', 'Cage stability']
>>> get("nmr").short, get("nmr").cli_flag, get("uvvis").x_unit
('NMR', '--nmr', 'nm')
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Iterable, MutableMapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from ..cage import Cage
from ..candidate import Candidate
from ..errors import EvidenceError
from ..settings import Settings
from ..spectra.model import register_technique, unregister_technique
from ..stability.channel import (
    CHANNEL_WEIGHT,
    StabilitySettings,
    accept_stability,
    observe_stability,
    stability_all,
    stability_signature,
)
from ..symmetry import Fingerprint
from ..verdict import TechniqueVerdict
from .electronic import compare_uvvis, observe_uvvis
from .mass import mass_verdict, observe_mass
from .nmr import compare_nmr, observe_nmr
from .thresholds import IrSettings, MassSettings, NmrSettings, RamanSettings, UvVisSettings
from .vibrational import compare_vibrational, observe_vibrational

__all__ = [
    "Technique",
    "CompareContext",
    "register",
    "unregister",
    "get",
    "keys",
    "techniques",
    "default_weights",
    "compare_all",
    "map_by_signature",
    "nmr_partners",
]


@dataclass(frozen=True)
class CompareContext:
    """What a comparison may look at besides one candidate.

    Attributes
    ----------
    technique : str
    observation : object
        The technique's observation (from its ``observe``).
    settings : Settings
        The technique's settings in use.
    candidates : tuple of Candidate
        The whole candidate set (for verdicts relative to the others, or
        second components of a mixture).
    memo : dict
        Scratch space for what depends on the candidate set alone (kept by
        the session until the candidates change), e.g. the distinct 13C
        patterns a mixture search tries.
    """

    technique: str
    observation: Any
    settings: Settings
    candidates: tuple[Candidate, ...] = ()
    memo: dict[str, Any] = field(default_factory=dict, compare=False, repr=False)


@dataclass(frozen=True)
class Technique:
    """One technique as every layer of the kit sees it.

    Attributes
    ----------
    key : str
        ``"mass"``, ``"nmr"``, ... (the key of spectra, settings, verdicts).
    label, short : str
        Display label (``"13C NMR"``) and short label (``"NMR"``); one spelling each.
    x_unit : str
        Unit of the spectrum's x axis (``""`` for a technique without a spectrum).
    settings : type
        Its :class:`~cageprint.settings.Settings` dataclass.
    observe : callable
        ``observe(data, settings) -> observation``; ``data`` is a Spectrum,
        the technique's own input (see ``accept``), or None when it needs none.
    signature : callable
        ``signature(candidate) -> hashable``: all the comparison depends on;
        equal signatures get the very same verdict (they tie exactly).
    compare : callable, optional
        ``compare(candidate, context) -> TechniqueVerdict`` for one candidate.
    compare_all : callable, optional
        ``compare_all(context, cache) -> [TechniqueVerdict per candidate]``,
        the batch hook for verdicts relative to the whole set; ``cache`` maps
        signature -> verdict and is filled.  Default: :func:`map_by_signature`
        over ``compare``.
    predicted : callable
        ``predicted(candidate) -> number or None``: what the live panel shows.
    tie_note : callable
        ``tie_note(candidate) -> str``: why two candidates with equal
        signatures tie (``"same NMR pattern (19x4)"``).
    marks : callable
        ``marks(observation) -> positions``: what to mark on the spectrum.
    observed_noun : str
        What the observation counts, plural (``"lines"``, ``"IR bands"``).
    weight : float
        Default weight in the overall score.
    cli_flag : str or None
        ``cageprint assign`` option taking its file (``"--nmr"``).
    needs_spectrum : bool
        False for a technique judged from other data (``accept``) or from the
        candidates alone.
    accept : callable, optional
        ``accept(source) -> data``: checks and converts the input of a
        technique that takes no spectrum (e.g. a prior as a mapping).
    predict : callable, optional
        ``predict(cage, fingerprint) -> JSON-ready value`` stored in
        ``candidate.extra[key]`` when candidates are generated.
    reverse_x : bool
        Draw the x axis falling (ppm, wavenumbers).
    """

    key: str
    label: str
    short: str
    x_unit: str
    settings: type[Settings]
    observe: Callable[[Any, Any], Any]
    signature: Callable[[Candidate], Hashable]
    compare: Callable[[Candidate, CompareContext], TechniqueVerdict] | None = None
    compare_all: Callable[[CompareContext, MutableMapping[Hashable, TechniqueVerdict]],
                          list[TechniqueVerdict]] | None = None
    predicted: Callable[[Candidate], Any] = field(default=lambda c: None)
    tie_note: Callable[[Candidate], str] = field(default=lambda c: "same prediction")
    marks: Callable[[Any], Sequence[float]] = field(default=lambda obs: ())
    observed_noun: str = "peaks"
    weight: float = 1.0
    cli_flag: str | None = None
    needs_spectrum: bool = True
    accept: Callable[[Any], Any] | None = None
    predict: Callable[[Cage, Fingerprint], Any] | None = None
    reverse_x: bool = False

    def signature_of(self, candidate: Candidate) -> Hashable:
        """``signature(candidate)``, computed once per candidate."""
        return candidate.memo(self._memo_key, self.signature)

    @property
    def _memo_key(self) -> str:
        return self.__dict__["_memo_key_value"]

    def __post_init__(self) -> None:
        object.__setattr__(self, "_memo_key_value", f"signature:{self.key}:{id(self.signature)}")
        if self.compare is None and self.compare_all is None:
            raise EvidenceError(f"technique {self.key!r}: give compare or compare_all")
        if self.settings.technique != self.key:
            raise EvidenceError(f"technique {self.key!r}: its settings class "
                                f"{self.settings.__name__} is for {self.settings.technique!r}")


_REGISTRY: dict[str, Technique] = {}


def register(technique: Technique, *, replace: bool = False) -> Technique:
    """Add a technique (after the ones registered before it); returns it."""
    if technique.key in _REGISTRY and not replace:
        raise EvidenceError(f"technique {technique.key!r} is registered already; pass "
                            "replace=True to replace it")
    _REGISTRY[technique.key] = technique
    if technique.needs_spectrum:
        register_technique(technique.key, technique.x_unit)
    return technique


def unregister(key: str) -> None:
    """Remove a technique (tests; the built-in ones can be registered again)."""
    _REGISTRY.pop(key, None)
    unregister_technique(key)


def get(key: str) -> Technique:
    """The record of a technique; EvidenceError naming the known keys otherwise."""
    try:
        return _REGISTRY[key]
    except (KeyError, TypeError):
        raise EvidenceError(f"technique {key!r} is not one of {', '.join(_REGISTRY)}") from None


def keys() -> tuple[str, ...]:
    """Technique keys in display order."""
    return tuple(_REGISTRY)


def techniques() -> tuple[Technique, ...]:
    """Technique records in display order."""
    return tuple(_REGISTRY.values())


def default_weights() -> dict[str, float]:
    """Technique -> default weight."""
    return {t.key: t.weight for t in _REGISTRY.values()}


def map_by_signature(candidates: Iterable[Candidate],
                          signature: Callable[[Candidate], Hashable],
                          compare: Callable[[Candidate], TechniqueVerdict],
                          cache: MutableMapping[Hashable, TechniqueVerdict] | None = None,
                          ) -> list[TechniqueVerdict]:
    """Compare every candidate, computing once per distinct signature.

    ``cache`` (signature -> verdict) is filled and reused when given.
    Candidates with equal signatures get the very same verdict, so they tie.
    """
    cache = {} if cache is None else cache
    out = []
    for c in candidates:
        key = signature(c)
        v = cache.get(key)
        if v is None:
            v = cache[key] = compare(c)
        out.append(v)
    return out


def compare_all(technique: Technique, context: CompareContext,
                cache: MutableMapping[Hashable, TechniqueVerdict]) -> list[TechniqueVerdict]:
    """Verdicts of one technique for every candidate of ``context``, in candidate order."""
    if technique.compare_all is not None:
        return technique.compare_all(context, cache)
    compare = technique.compare
    assert compare is not None  # checked when the record was made
    return map_by_signature(context.candidates, technique.signature_of,
                            lambda c: compare(c, context), cache)


# ---------------------------------------------------------------- the built-in techniques


def nmr_partners(candidates: Iterable[Candidate]) -> list[tuple[tuple[int, ...], str]]:
    """Distinct 13C patterns of the candidates, labelled, for the mixture search."""
    groups: dict[tuple[int, ...], list[Candidate]] = {}
    for c in candidates:
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


def _nmr_all(context: CompareContext,
             cache: MutableMapping[Hashable, TechniqueVerdict]) -> list[TechniqueVerdict]:
    options = context.settings.values("compare")

    def one(c: Candidate) -> TechniqueVerdict:
        partners = context.memo.get("nmr_partners")
        if partners is None:
            partners = context.memo["nmr_partners"] = nmr_partners(context.candidates)
        return compare_nmr(c, context.observation, partners=partners, **options)

    return map_by_signature(context.candidates, get("nmr").signature_of, one, cache)


def _nmr_signature(c: Candidate) -> tuple[int, ...]:
    return c.nmr_sizes


def _bands(c: Candidate, context: CompareContext) -> TechniqueVerdict:
    return compare_vibrational(c, context.observation, **context.settings.values("compare"))


def _uv_signature(c: Candidate) -> Hashable:
    gap = None if c.gap_beta is None else round(c.gap_beta, 6)
    return (gap, tuple(round(t, 6) for t in c.transitions_beta[:3]))


def _observe(fn: Callable[..., Any]) -> Callable[[Any, Settings], Any]:
    """``fn(spectrum, **observe settings)`` as a registry ``observe``."""
    def observe(spectrum: Any, settings: Settings) -> Any:
        return fn(spectrum, **settings.values("observe"))

    observe.__name__ = observe.__qualname__ = fn.__name__
    return observe


def _positions(obs: Any) -> Sequence[float]:
    return obs.positions


for _t in (
    Technique("mass", "Mass spectrum", "MS", "m/z", MassSettings, _observe(observe_mass),
              signature=lambda c: (c.n, c.cage_charge),
              compare=lambda c, ctx: mass_verdict(c, ctx.observation,
                                                  **ctx.settings.values("compare")),
              tie_note=lambda c: "same cage size", marks=lambda obs: obs.peaks_mz,
              observed_noun="ions", cli_flag="--ms"),
    Technique("nmr", "13C NMR", "NMR", "ppm", NmrSettings, _observe(observe_nmr),
              signature=_nmr_signature, compare_all=_nmr_all,
              predicted=lambda c: len(c.nmr_sizes),
              tie_note=lambda c: f"same NMR pattern ({c.pattern})", marks=_positions,
              observed_noun="lines", cli_flag="--nmr", reverse_x=True),
    Technique("ir", "IR", "IR", "cm-1", IrSettings, _observe(observe_vibrational),
              signature=lambda c: c.ir_count, compare=_bands, predicted=lambda c: c.ir_count,
              tie_note=lambda c: f"same IR-active count ({c.ir_count})", marks=_positions,
              observed_noun="IR bands", cli_flag="--ir", reverse_x=True),
    Technique("raman", "Raman", "Raman", "cm-1", RamanSettings, _observe(observe_vibrational),
              signature=lambda c: c.raman_count, compare=_bands,
              predicted=lambda c: c.raman_count,
              tie_note=lambda c: f"same Raman-active count ({c.raman_count})",
              marks=_positions, observed_noun="Raman bands", cli_flag="--raman"),
    Technique("uvvis", "UV-vis", "UV", "nm", UvVisSettings, _observe(observe_uvvis),
              signature=_uv_signature,
              compare=lambda c, ctx: compare_uvvis(c, ctx.observation,
                                                   **ctx.settings.values("compare")),
              predicted=lambda c: None if c.gap_beta is None else round(c.gap_beta, 3),
              tie_note=lambda c: "same Hückel gap", marks=lambda obs: obs.bands_nm,
              observed_noun="bands", weight=0.3, cli_flag="--uv"),
    # no spectrum: a prior over the candidate set, on when given "indices", "xtb" or energies
    Technique("stability", "Cage stability", "Stability", "", StabilitySettings,
              observe_stability, signature=stability_signature, compare_all=stability_all,
              tie_note=lambda c: "same cage stability", observed_noun="criteria",
              weight=CHANNEL_WEIGHT, cli_flag="--stability", needs_spectrum=False,
              accept=accept_stability),
):
    register(_t)
