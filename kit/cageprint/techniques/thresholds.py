"""The settings of each built-in technique: one frozen dataclass each, in one place.

Defaults are the technique modules' named constants; units, valid ranges and
a short help sit beside each field (:func:`cageprint.settings.setting`).
``stage="observe"`` fields change what is found in the spectrum (the
observation is recomputed); ``stage="compare"`` fields change only how
candidates are judged against it.  A new technique declares its own settings
class in its own module the same way.

Examples
--------
>>> NmrSettings(snr=8).values("observe")["snr"]
8.0
>>> IrSettings.specs()["region"].unit, RamanSettings().region
('cm-1', (150.0, 1700.0))
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..formula import KNOWN_ELEMENTS
from ..settings import SNR_CHOICES, Settings, setting
from ..spectra import reference_lines
from . import electronic as el
from . import nmr
from . import vibrational as vib
from .mass import MASS_MINOR_ABUNDANCE
from .mass_match import MASS_TOL_FLOOR, MASS_TOL_PPM
from .mass_peaks import PEAK_SNR

__all__ = ["NmrSettings", "IrSettings", "RamanSettings", "UvVisSettings", "MassSettings",
           "SOLVENT_CHOICES"]

#: solvents the widgets offer for excluding 13C lines (any name of the reference table works)
SOLVENT_CHOICES = ("CS2", "CDCl3", "C6D6", "toluene-d8", "1,2-dichlorobenzene-d4")



def _cost(default: float, help: str) -> Any:
    """A compare-stage cost or weight (score units, 0 to 100)."""
    return setting(default, help=help, stage="compare", low=0.0, high=100.0)


def _known_solvent(name: Any) -> None:
    reference_lines(str(name))  # raises a SpectrumError (a ValueError) naming the known ones


def _known_metals(names: Any) -> None:
    bad = [m for m in names if m not in KNOWN_ELEMENTS]
    if bad:
        raise ValueError(f"unknown element {bad[0]!r}")


def _snr(default: float, what: str) -> Any:
    return setting(default, help=f"minimum signal-to-noise of a {what}", low=0.1, high=1e4,
                   choices=SNR_CHOICES, control="choices")


def _prominence() -> Any:
    return setting(None, help="minimum peak prominence in y units (none: S/N x noise)",
                   low=0.0, control="log")


@dataclass(frozen=True)
class NmrSettings(Settings):
    """13C NMR: how cage lines are found (observe) and judged (compare)."""

    technique = "nmr"
    region: tuple[float, float] = setting(nmr.NMR_REGION, kind="span", unit="ppm",
                                          low=-50.0, high=300.0, control="span",
                                          help="window of sp2 cage carbons")
    solvent: str | None = setting(None, kind="text", help="solvent whose 13C lines are left out",
                                  choices=SOLVENT_CHOICES, control="choice",
                                  check=_known_solvent)
    reference_lines: tuple[float, ...] = setting((), kind="floats", unit="ppm",
                                                 help="further positions left out (lock, "
                                                 "reference compounds)")
    reference_tol: float = setting(nmr.NMR_REFERENCE_TOL, unit="ppm", low=0.0, high=5.0,
                                   help="distance within which a reference line removes a peak")
    snr: float = _snr(nmr.NMR_SNR, "line")
    prominence: float | None = _prominence()
    integration_halfwidth: float = setting(nmr.NMR_INTEGRATION_HALFWIDTH, unit="ppm",
                                           low=1e-3, high=5.0,
                                           help="half-width of each line's integration window")
    use_intensities: bool = setting(True, kind="bool",
                                    help="use line integrals (false: line count only)")
    keep_unlisted_multiplets: bool = setting(False, kind="bool",
                                             help="count 1:1:1 C-D triplets no declared "
                                             "solvent explains as cage lines")
    integral_tol: float = setting(nmr.NMR_INTEGRAL_TOL, stage="compare", low=1e-3, high=5.0,
                                  help="relative integral error of one standard deviation")
    max_merge: int = setting(nmr.NMR_MAX_MERGE, stage="compare", kind="int", low=1, high=6,
                             help="most orbits one observed line may carry")
    merge_cost: float = _cost(nmr.NMR_MERGE_COST, "cost of each extra orbit on a line")
    impurity_cost: float = _cost(nmr.NMR_IMPURITY_COST, "cost of an unexplained line")
    impurity_strength_cost: float = _cost(nmr.NMR_IMPURITY_STRENGTH_COST,
                                          "extra cost of a strong unexplained line")
    missing_cost: float = _cost(nmr.NMR_MISSING_COST, "cost of an unseen orbit")
    impurity_allowance: int = setting(nmr.NMR_IMPURITY_ALLOWANCE, stage="compare", kind="int",
                                      low=0, high=100,
                                      help="unexplained lines tolerated before ruling out")
    lost_allowance: float = setting(nmr.NMR_LOST_ALLOWANCE, stage="compare", low=0.0, high=1.0,
                                    help="fraction of orbits merged or missing tolerated")
    minor_fraction: float = setting(nmr.NMR_MINOR_FRACTION, stage="compare", low=0.0, high=1.0,
                                    help="unexplained intensity fraction that rules out")
    mixture_cost: float = _cost(nmr.NMR_MIXTURE_COST, "cost of assuming a mixture")
    minor_component_cost: float = _cost(nmr.NMR_MINOR_COMPONENT_COST,
                                        "extra cost of being the minor component")


def _window_cm(default: tuple[float, float]) -> Any:
    return setting(default, kind="span", unit="cm-1", low=0.0, high=1e4, control="span",
                   help="fingerprint window of cage modes")


@dataclass(frozen=True)
class IrSettings(Settings):
    """IR: how bands are counted (observe) and judged against allowed modes (compare)."""

    technique = "ir"
    region: tuple[float, float] = _window_cm(vib.IR_REGION)
    exclude: Any = setting(None, kind="windows", unit="cm-1", low=0.0, words=("atmospheric",),
                           help="artefact windows whose bands are ignored (none: the CO2 Q "
                           "branch for IR)")
    snr: float = _snr(vib.BAND_SNR, "band")
    prominence: float | None = _prominence()
    min_separation: float = setting(vib.BAND_MIN_SEPARATION, unit="cm-1", low=0.0, high=200.0,
                                    help="bands closer than this count as one")
    allowance: int = setting(vib.EXTRA_BAND_ALLOWANCE, stage="compare", kind="int", low=0,
                             high=50, help="extra bands tolerated (overtones, impurities)")
    extra_cost: float = _cost(vib.EXTRA_BAND_COST, "score lost per extra band")
    fewer_weight: float = _cost(vib.FEWER_BAND_WEIGHT,
                                "weight of the fewer-bands-than-allowed penalty")


@dataclass(frozen=True)
class RamanSettings(IrSettings):
    """Raman: as IR, with the Raman window and no artefact windows by default."""

    technique = "raman"
    region: tuple[float, float] = _window_cm(vib.RAMAN_REGION)


@dataclass(frozen=True)
class UvVisSettings(Settings):
    """UV-vis: how the onset is found (observe) and weighed against Hückel gaps (compare)."""

    technique = "uvvis"
    region: tuple[float, float] = setting(el.UV_REGION, kind="span", unit="nm", low=100.0,
                                          high=5000.0, control="span",
                                          help="wavelength window")
    onset_fraction: float = setting(el.UV_ONSET_FRACTION, low=1e-4, high=0.999,
                                    help="onset level as a fraction of the absorbance maximum")
    snr: float = _snr(el.UV_SNR, "band")
    prominence: float | None = _prominence()
    beta_ev: float = setting(el.HUCKEL_BETA_EV, stage="compare", unit="eV", low=0.1, high=10.0,
                             help="|β| turning Hückel gaps into eV")
    tol_ev: float = setting(el.UV_TOL_EV, stage="compare", unit="eV", low=0.01, high=10.0,
                            help="one standard deviation of the gap-onset mismatch")
    max_cost: float = _cost(el.UV_MAX_COST, "most score UV-vis can take away")


@dataclass(frozen=True)
class MassSettings(Settings):
    """Mass spectrum: how species are found (observe) and judged against a cage (compare)."""

    technique = "mass"
    snr: float = setting(PEAK_SNR, help="peak threshold in noise standard deviations",
                         low=0.1, high=1e4, choices=SNR_CHOICES, control="choices")
    ppm: float = setting(MASS_TOL_PPM, unit="ppm", low=0.01, high=1e4,
                         help="mass tolerance relative to m/z")
    floor: float = setting(MASS_TOL_FLOOR, unit="m/z", low=0.0, high=10.0,
                           help="smallest mass tolerance")
    c13: Any = setting(None, low=0.0, high=1.0, words=("fit",),
                       help="13C fraction of the envelopes (none: natural; 'fit': fitted)")
    calibrate: Any = setting(True, kind="flag_or_float", unit="m/z", low=-10.0, high=10.0,
                             help="estimate an m/z offset from the C_n ladder (true), none "
                             "(false) or use this offset")
    polarity: str | None = setting(None, kind="text", choices=("positive", "negative"),
                                   help="ion polarity (none: from the file, else positive)")
    metals: tuple[str, ...] | None = setting(None, kind="names", check=_known_metals,
                                             help="metals searched for endohedral species")
    clip_negative: bool = setting(False, kind="bool",
                                  help="set negative intensities to zero instead of refusing")
    minor_abundance: float = setting(MASS_MINOR_ABUNDANCE, stage="compare", low=0.0, high=1.0,
                                     help="relative abundance below which a cage is minor")
