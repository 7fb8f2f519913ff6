"""Widget controls built from a technique's settings dataclass, keyed by setting name.

Each field whose :class:`~cageprint.settings.Spec` names a ``control`` gets
one :class:`SettingControl` (as ``ipywidgets.interactive_output`` keys its
controls by argument name).  A control always shows the value the session
uses: the current value is offered even when it is not one of the usual
choices (a session at S/N 8 shows 8, not the nearest round number).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import ipywidgets as w

from ..settings import Settings, Spec

__all__ = ["SettingControl", "build_controls"]

#: short captions of common settings (others show their field name)
CAPTIONS = {"snr": "min S/N", "region": "region", "prominence": "prominence",
            "solvent": "solvent"}
_NONE = "none"


class SettingControl:
    """One setting's control: ``.widget`` (the one with ``.value``), ``.parts`` (to lay out).

    ``x_range`` bounds a span control (the spectrum's x range).
    """

    def __init__(self, name: str, spec: Spec, value: Any,
                 x_range: tuple[float, float] = (0.0, 1.0)):
        self.name, self.spec = name, spec
        self.switch: w.Checkbox | None = None
        caption = CAPTIONS.get(name, name.replace("_", " "))
        if spec.unit:  # the readout shows a number: its unit sits in the label
            caption = f"{caption} ({spec.unit})"
        kind = spec.control
        if kind == "choices":
            self.widget = w.Dropdown(options=self._number_options(value), value=value,
                                     description=caption)
        elif kind == "log":
            self.widget = w.FloatLogSlider(value=float(value or 1e-2), base=10, min=-4, max=1,
                                           step=0.1, description=caption,
                                           readout_format=".1e", continuous_update=False)
            self.switch = w.Checkbox(value=value is not None, description=f"use {caption}",
                                     indent=False)
        elif kind == "span":
            lo, hi = float(min(x_range)), float(max(x_range))
            self.widget = w.FloatRangeSlider(value=self._clamp(value, lo, hi), min=lo, max=hi,
                                             step=(hi - lo) / 400 or 1.0, description=caption,
                                             continuous_update=False,
                                             layout=w.Layout(width="480px"))
        elif kind == "choice":
            self.widget = w.Dropdown(options=self._word_options(value),
                                     value=_NONE if value is None else value,
                                     description=caption)
        else:
            raise ValueError(f"setting {name!r}: no widget for control {kind!r}")
        self.widget.add_class(f"cp-{name.replace('_', '-')}")
        self.widget.tooltip = spec.help
        self.parts: list[w.Widget] = ([self.switch] if self.switch else []) + [self.widget]

    def _number_options(self, value: Any) -> list[tuple[str, Any]]:
        values = sorted({float(v) for v in self.spec.choices} | {float(value)})
        return [(f"{v:g}", v) for v in values]

    def _word_options(self, value: Any) -> list[str]:
        words = [str(c) for c in self.spec.choices]
        if value is not None and value not in words:
            words.append(str(value))
        return [_NONE, *words]

    @staticmethod
    def _clamp(value: Any, lo: float, hi: float) -> tuple[float, float]:
        a, b = (float(v) for v in value)
        a, b = min(max(a, lo), hi), max(min(b, hi), lo)
        return (a, b) if a < b else (lo, hi)

    def value(self) -> Any:
        """The setting value the control holds."""
        if self.spec.control == "choices":
            return float(self.widget.value)
        if self.spec.control == "log":
            return float(self.widget.value) if self.switch and self.switch.value else None
        if self.spec.control == "span":
            return tuple(float(v) for v in self.widget.value)
        return None if self.widget.value == _NONE else self.widget.value

    def shows(self, value: Any) -> bool:
        """True when the control already shows ``value`` (nothing to redraw)."""
        kind = self.spec.control
        if kind == "choices":
            return float(self.widget.value) == float(value)
        if kind == "log":
            assert self.switch is not None
            return self.switch.value == (value is not None) and (
                value is None or float(self.widget.value) == float(value))
        if kind == "span":
            return tuple(self.widget.value) == self._clamp(value, self.widget.min,
                                                           self.widget.max)
        return self.widget.value == (_NONE if value is None else value)

    def show(self, value: Any) -> None:
        """Show the value the session uses (callers hold their observers meanwhile)."""
        kind = self.spec.control
        if kind == "choices":
            if float(value) not in [v for _, v in self.widget.options]:
                self.widget.options = self._number_options(value)
            self.widget.value = float(value)
        elif kind == "log":
            assert self.switch is not None
            self.switch.value = value is not None
            if value is not None:
                self.widget.value = float(value)
        elif kind == "span":
            self.widget.value = self._clamp(value, self.widget.min, self.widget.max)
        else:
            if value is not None and value not in self.widget.options:
                self.widget.options = self._word_options(value)
            self.widget.value = _NONE if value is None else value

    def observe(self, handler: Callable[[dict], None]) -> None:
        for part in self.parts:
            part.observe(handler, names=["value"])


def build_controls(settings: Settings,
                   x_range: tuple[float, float]) -> dict[str, SettingControl]:
    """A control per setting that names one, keyed by setting name, showing ``settings``."""
    return {name: SettingControl(name, spec, getattr(settings, name), x_range)
            for name, spec in settings.specs().items() if spec.control}
