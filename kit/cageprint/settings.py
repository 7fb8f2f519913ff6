"""Typed settings: frozen dataclasses whose fields carry default, unit, range and help.

Each technique has one settings class (a frozen dataclass deriving from
:class:`Settings`); every field is declared with :func:`setting`, which puts a
:class:`Spec` in the field's metadata.  One declaration serves every layer:

* construction validates each value (type, range, choices) and raises a
  :class:`~cageprint.errors.SettingsError` naming the setting, the value and
  what was expected;
* :meth:`Settings.parse` reads a value from text (``cageprint assign --set
  nmr.snr=8``);
* the widgets build a control for each field whose spec names one;
* ``spec.stage`` says whether a field changes the *observation* of a spectrum
  or only the *comparison* with candidates, so a session recomputes only
  what it must.

Examples
--------
>>> from dataclasses import dataclass
>>> @dataclass(frozen=True)
... class PeakSettings(Settings):
...     technique = "demo"
...     snr: float = setting(5.0, help="minimum signal-to-noise", low=0.0)
>>> PeakSettings().snr, PeakSettings.parse("snr", "8")
(5.0, 8.0)
>>> PeakSettings(snr=-1)
Traceback (most recent call last):
...
cageprint.errors.SettingsError: demo.snr = -1: expected a number >= 0 (minimum signal-to-noise)
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, ClassVar, TypeVar

from .errors import SettingsError
from .plain import plain

__all__ = ["Spec", "Settings", "setting", "STAGES", "KINDS", "SNR_CHOICES"]

#: what a setting changes: the observation of a spectrum, or only the comparisons
STAGES = ("observe", "compare")
#: value kinds a setting may have
KINDS = ("float", "int", "bool", "text", "span", "floats", "names", "windows",
         "flag_or_float")
#: signal-to-noise values offered by the widgets (a chemist picks round numbers)
SNR_CHOICES: tuple[float, ...] = (3.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0)

S = TypeVar("S", bound="Settings")
#: settings class -> its field specs (dataclass fields never change after the class is made)
_SPECS: dict[type, Mapping[str, Spec]] = {}


@dataclass(frozen=True)
class Spec:
    """How one setting is described, checked, parsed and shown.

    Attributes
    ----------
    help : str
        Short description (shown in errors, ``--help`` and widget tooltips).
    unit : str
        Unit of the value (``"ppm"``, ``"cm-1"``; empty for plain numbers).
    stage : {"observe", "compare"}
    kind : str
        One of :data:`KINDS`.
    low, high : float, optional
        Inclusive bounds of a number (each end of a span).
    optional : bool
        None is allowed (meaning "not used" or "automatic").
    words : tuple of str
        Words allowed instead of a value (``"fit"`` for a fitted 13C fraction).
    choices : tuple
        Values a widget offers (the current value is always offered too).
    control : str
        Widget to build: ``"choices"`` (dropdown of numbers), ``"log"`` (log
        slider with an on/off box), ``"span"`` (range slider over the
        spectrum), ``"choice"`` (dropdown of words with "none"), or ``""``.
    check : callable, optional
        Further check of a value; raises ``ValueError`` with the reason.
    """

    help: str
    unit: str = ""
    stage: str = "observe"
    kind: str = "float"
    low: float | None = None
    high: float | None = None
    optional: bool = False
    words: tuple[str, ...] = ()
    choices: tuple[Any, ...] = ()
    control: str = ""
    check: Callable[[Any], None] | None = None

    def expected(self) -> str:
        """What a valid value looks like, in words."""
        what = {"float": "a number", "int": "a whole number", "bool": "true or false",
                "text": "a text", "span": "two numbers low,high with low < high",
                "floats": "numbers separated by commas", "names": "names separated by commas",
                "windows": "windows low:high separated by commas",
                "flag_or_float": "true, false or a number"}[self.kind]
        if self.low is not None and self.high is not None:
            what += f" from {self.low:g} to {self.high:g}"
        elif self.low is not None:
            what += f" >= {self.low:g}"
        elif self.high is not None:
            what += f" <= {self.high:g}"
        if self.unit:
            what += f" {self.unit}"
        extra = [f"'{w}'" for w in self.words] + (["none"] if self.optional else [])
        if self.kind == "text" and self.choices and not self.check:
            extra = [repr(c) for c in self.choices] + extra
        if extra:
            what += ", or " + " or ".join(extra)
        return what


def setting(default: Any, *, help: str, unit: str = "", stage: str = "observe",
            kind: str = "float", low: float | None = None, high: float | None = None,
            optional: bool = False, words: tuple[str, ...] = (),
            choices: tuple[Any, ...] = (), control: str = "",
            check: Callable[[Any], None] | None = None) -> Any:
    """Declare a settings field: its default and its :class:`Spec`."""
    if stage not in STAGES:
        raise SettingsError(f"setting stage must be one of {', '.join(STAGES)}; got {stage!r}")
    if kind not in KINDS:
        raise SettingsError(f"setting kind must be one of {', '.join(KINDS)}; got {kind!r}")
    spec = Spec(help=help, unit=unit, stage=stage, kind=kind, low=low, high=high,
                optional=optional or default is None, words=words, choices=choices,
                control=control, check=check)
    return field(default=default, metadata={"setting": spec})


def _number(spec: Spec, value: Any, integer: bool = False) -> Any:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError("not a number")
    x = float(value)
    if not math.isfinite(x):
        raise ValueError("not finite")
    if integer:
        if x != int(x):
            raise ValueError("not a whole number")
        x = int(x)
    if (spec.low is not None and x < spec.low) or (spec.high is not None and x > spec.high):
        raise ValueError("out of range")
    return x


def _coerce(spec: Spec, value: Any) -> Any:
    """The value in its one stored form (tuples, floats), or ValueError."""
    if value is None:
        if spec.optional:
            return None
        raise ValueError("None is not allowed")
    if isinstance(value, str) and value in spec.words:
        return value
    kind = spec.kind
    if kind == "float":
        return _number(spec, value)
    if kind == "int":
        return _number(spec, value, integer=True)
    if kind == "bool":
        if not isinstance(value, bool):
            raise ValueError("not true or false")
        return value
    if kind == "flag_or_float":
        return value if isinstance(value, bool) else _number(spec, value)
    if kind == "text":
        if not isinstance(value, str) or not value.strip():
            raise ValueError("not a text")
        if spec.choices and not spec.check and value not in spec.choices:
            raise ValueError("not one of the choices")
        return value.strip()
    if isinstance(value, (str, bytes)) or not hasattr(value, "__iter__"):
        raise ValueError("not a sequence")
    items = list(value)
    if kind == "names":
        if not all(isinstance(v, str) and v for v in items):
            raise ValueError("not names")
        return tuple(items)
    if kind == "floats":
        return tuple(_number(spec, v) for v in items)
    if kind == "span":
        if len(items) != 2:
            raise ValueError("not two numbers")
        lo, hi = (_number(spec, v) for v in items)
        if not lo < hi:
            raise ValueError("low not below high")
        return (lo, hi)
    # windows: (low, high[, reason]) items
    out = []
    for w in items:
        w = list(w)
        if len(w) not in (2, 3):
            raise ValueError("a window is not (low, high[, reason])")
        lo, hi = _number(spec, w[0]), _number(spec, w[1])
        if not lo < hi:
            raise ValueError("low not below high")
        out.append((lo, hi, str(w[2]) if len(w) == 3 else ""))
    return tuple(out)


def _parse_text(spec: Spec, text: str) -> Any:
    """A value from command-line text (not yet checked against the range)."""
    t = text.strip()
    low = t.lower()
    if low in ("none", "") and spec.optional:
        return None
    if t in spec.words:
        return t
    kind = spec.kind
    if kind in ("bool", "flag_or_float") and low in ("true", "yes", "on", "false", "no", "off"):
        return low in ("true", "yes", "on")
    if kind in ("float", "flag_or_float"):
        return float(t)
    if kind == "int":
        return int(t)
    if kind == "text":
        return t
    parts = [p.strip() for p in t.replace(";", ",").split(",") if p.strip()]
    if kind == "names":
        return tuple(parts)
    if kind == "windows":
        return tuple(tuple(float(v) for v in p.split(":")) for p in parts)
    if kind == "span" and len(parts) == 1 and ":" in parts[0]:
        parts = parts[0].split(":")
    return tuple(float(p) for p in parts)


class Settings:
    """Base of every technique's settings dataclass (declare fields with :func:`setting`).

    Subclasses are ``@dataclass(frozen=True)`` and set the class attribute
    ``technique``.  Instances are validated on construction; use
    :meth:`replace` to change values (validated again).
    """

    technique: ClassVar[str] = ""

    def __post_init__(self) -> None:
        for name in self.specs():
            object.__setattr__(self, name, self.check(name, getattr(self, name)))

    @classmethod
    def specs(cls) -> Mapping[str, Spec]:
        """Field name -> :class:`Spec`, in declaration order (read once per class)."""
        found = _SPECS.get(cls)
        if found is None:
            found = _SPECS[cls] = MappingProxyType(
                {f.name: f.metadata["setting"] for f in dataclasses.fields(cls)  # type: ignore[arg-type]
                 if "setting" in f.metadata})
        return found

    @classmethod
    def spec(cls, name: str) -> Spec:
        """The spec of one field; SettingsError for an unknown name."""
        specs = cls.specs()
        if name not in specs:
            raise SettingsError(f"{cls.technique}: unknown setting {name!r}; expected one of "
                                f"{', '.join(specs)}")
        return specs[name]

    @classmethod
    def check(cls, name: str, value: Any) -> Any:
        """``value`` validated for setting ``name`` in its stored form."""
        spec = cls.spec(name)
        if isinstance(value, list):
            value = tuple(value)
        try:
            value = _coerce(spec, value)
            if spec.check is not None and value is not None and value not in spec.words:
                spec.check(value)
        except (ValueError, TypeError) as exc:
            why = str(exc)
            detail = "" if why in _PLAIN_REASONS else f"; {why}"
            raise SettingsError(f"{cls.technique}.{name} = {value!r}: expected "
                                f"{spec.expected()} ({spec.help}){detail}") from None
        return value

    @classmethod
    def parse(cls, name: str, text: str) -> Any:
        """Read setting ``name`` from text (``"8"``, ``"128,152"``, ``"none"``) and check it."""
        spec = cls.spec(name)
        try:
            value = _parse_text(spec, text)
        except ValueError:
            raise SettingsError(f"{cls.technique}.{name} = {text!r}: expected "
                                f"{spec.expected()} ({spec.help})") from None
        return cls.check(name, value)

    @classmethod
    def defaults(cls: type[S]) -> S:
        return cls()

    def replace(self: S, **changes: Any) -> S:
        """A copy with some values changed (each checked; unknown names refused)."""
        for name in changes:
            self.spec(name)
        return dataclasses.replace(self, **changes)  # type: ignore[type-var]

    def values(self, stage: str | None = None) -> dict[str, Any]:
        """Field values (of one stage, or all) as a dict, in declaration order."""
        return {name: getattr(self, name) for name, spec in self.specs().items()
                if stage is None or spec.stage == stage}

    def changed(self) -> dict[str, Any]:
        """The values that differ from the defaults."""
        default = type(self)()
        return {k: v for k, v in self.values().items() if getattr(default, k) != v}

    def to_dict(self) -> dict[str, Any]:
        return plain(self.values())

    @classmethod
    def from_dict(cls: type[S], d: Mapping[str, Any]) -> S:
        specs = cls.specs()
        return cls(**{k: v for k, v in d.items() if k in specs})  # type: ignore[call-arg]


_PLAIN_REASONS = frozenset({"not a number", "out of range", "not finite", "not a whole number",
                            "not true or false", "not a text", "not one of the choices",
                            "not a sequence", "not names", "not two numbers",
                            "low not below high", "None is not allowed"})
