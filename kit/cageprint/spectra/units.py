"""Unit names and the conversions the spectroscopy trade uses.

Canonical x units are the ones the kit works in (``TECHNIQUES`` in
:mod:`cageprint.spectra.model`): ``m/z``, ``cm-1``, ``ppm``, ``nm``.  Files
may carry others (eV, micrometres, Hz); :func:`to_kit_x` converts them.

Constants
---------
HC_EV_NM : float
    h*c/e in eV nm (CODATA 2018: h and e exact, c exact), so that
    ``E[eV] = HC_EV_NM / lambda[nm]``.
"""

from __future__ import annotations

import re

import numpy as np

from ..errors import SpectrumError

__all__ = [
    "HC_EV_NM",
    "normalise_x_unit",
    "normalise_y_unit",
    "technique_for_x_unit",
    "nm_to_ev",
    "ev_to_nm",
    "nm_to_wavenumber",
    "wavenumber_to_nm",
    "ev_to_wavenumber",
    "wavenumber_to_ev",
    "hz_to_ppm",
    "ppm_to_hz",
    "transmittance_to_absorbance",
    "absorbance_to_transmittance",
    "to_kit_x",
]

# CODATA 2018 (E. Tiesinga et al., Rev. Mod. Phys. 93, 025010, 2021): h = 6.62607015e-34 J s,
# c = 299792458 m/s, e = 1.602176634e-19 C, all exact; h*c/e = 1239.841984... eV nm.
HC_EV_NM = 6.62607015e-34 * 299792458.0 / 1.602176634e-19 * 1e9

# spelling in files (lower case, spaces removed) -> canonical x unit
_X_UNITS = {
    "m/z": "m/z", "mz": "m/z", "th": "m/z", "thomson": "m/z", "da": "m/z", "u": "m/z",
    "cm-1": "cm-1", "cm^-1": "cm-1", "1/cm": "cm-1", "cm**-1": "cm-1", "cm⁻¹": "cm-1",
    "wavenumber": "cm-1", "wavenumbers": "cm-1", "ramanshift": "cm-1",
    "ppm": "ppm",
    "hz": "Hz",
    "nm": "nm", "nanometer": "nm", "nanometers": "nm", "nanometre": "nm", "nanometres": "nm",
    "um": "um", "µm": "um", "μm": "um", "micrometer": "um", "micrometers": "um",
    "micrometre": "um", "micrometres": "um", "micron": "um", "microns": "um",
    "ev": "eV",
}

# canonical x unit -> technique it implies (None: ambiguous)
_TECHNIQUE_OF_UNIT = {
    "m/z": "mass", "cm-1": None, "ppm": "nmr", "Hz": "nmr", "nm": "uvvis", "um": "ir",
    "eV": "uvvis",
}

# spelling in files -> y meaning
_Y_UNITS = {
    "absorbance": "absorbance", "abs": "absorbance", "a": "absorbance",
    "transmittance": "transmittance", "t": "transmittance",
    "%t": "percent transmittance", "%transmittance": "percent transmittance",
    "percenttransmittance": "percent transmittance", "transmittance(%)": "percent transmittance",
    "intensity": "intensity", "counts": "intensity", "arbitraryunits": "intensity",
    "a.u.": "intensity", "arb.units": "intensity", "cps": "intensity",
    "relativeabundance": "intensity", "reflectance": "reflectance",
    "kubelka-munk": "kubelka-munk",
}


#: the y meanings the kit knows (AU is left out of the table: absorbance units or arbitrary?)
Y_MEANINGS = frozenset(_Y_UNITS.values())


def _key(text: str) -> str:
    return re.sub(r"\s+", "", str(text)).lower()


def normalise_x_unit(text: str) -> str | None:
    """Canonical spelling of an x unit, or None if the unit is not known.

    Examples
    --------
    >>> normalise_x_unit("1/CM"), normalise_x_unit("Nanometers"), normalise_x_unit("furlong")
    ('cm-1', 'nm', None)
    """
    return _X_UNITS.get(_key(text))


def normalise_y_unit(text: str) -> str:
    """Canonical y meaning (absorbance, transmittance, ...); unknown text is kept, lower case.

    Examples
    --------
    >>> normalise_y_unit("%T"), normalise_y_unit("ARBITRARY UNITS")
    ('percent transmittance', 'intensity')
    """
    k = _key(text)
    return _Y_UNITS.get(k, str(text).strip().lower() or "intensity")


def technique_for_x_unit(unit: str) -> str | None:
    """Technique implied by a canonical x unit (None where it is ambiguous, as cm-1).

    Examples
    --------
    >>> technique_for_x_unit("ppm"), technique_for_x_unit("cm-1")
    ('nmr', None)
    """
    return _TECHNIQUE_OF_UNIT.get(unit)


def nm_to_ev(nm):
    """Photon energy in eV of a wavelength in nm.

    Examples
    --------
    >>> round(float(nm_to_ev(620.0)), 4)
    1.9997
    """
    return HC_EV_NM / np.asarray(nm, dtype=float)


def ev_to_nm(ev):
    """Wavelength in nm of a photon energy in eV (inverse of :func:`nm_to_ev`).

    Examples
    --------
    >>> round(float(ev_to_nm(2.0)), 2)
    619.92
    """
    return HC_EV_NM / np.asarray(ev, dtype=float)


def nm_to_wavenumber(nm):
    """Wavenumber in cm-1 of a wavelength in nm (1e7 / nm).

    Examples
    --------
    >>> float(nm_to_wavenumber(500.0))
    20000.0
    """
    return 1e7 / np.asarray(nm, dtype=float)


def wavenumber_to_nm(cm1):
    """Wavelength in nm of a wavenumber in cm-1 (1e7 / cm-1).

    Examples
    --------
    >>> float(wavenumber_to_nm(20000.0))
    500.0
    """
    return 1e7 / np.asarray(cm1, dtype=float)


def ev_to_wavenumber(ev):
    """Wavenumber in cm-1 of a photon energy in eV.

    Examples
    --------
    >>> round(float(ev_to_wavenumber(1.0)), 1)
    8065.5
    """
    return nm_to_wavenumber(ev_to_nm(ev))


def wavenumber_to_ev(cm1):
    """Photon energy in eV of a wavenumber in cm-1.

    Examples
    --------
    >>> round(float(wavenumber_to_ev(8065.54)), 4)
    1.0
    """
    return nm_to_ev(wavenumber_to_nm(cm1))


def _mhz(observe_mhz) -> float:
    if observe_mhz is None or not np.isfinite(observe_mhz) or observe_mhz <= 0:
        raise SpectrumError(
            f"observe_mhz must be the spectrometer frequency in MHz (> 0), got {observe_mhz!r}"
        )
    return float(observe_mhz)


def hz_to_ppm(hz, observe_mhz: float):
    """Chemical shift in ppm of an offset in Hz, given the observe frequency in MHz.

    Examples
    --------
    >>> float(hz_to_ppm(18000.0, 125.0))
    144.0
    """
    return np.asarray(hz, dtype=float) / _mhz(observe_mhz)


def ppm_to_hz(ppm, observe_mhz: float):
    """Offset in Hz of a chemical shift in ppm, given the observe frequency in MHz.

    Examples
    --------
    >>> float(ppm_to_hz(144.0, 125.0))
    18000.0
    """
    return np.asarray(ppm, dtype=float) * _mhz(observe_mhz)


def transmittance_to_absorbance(t, percent: bool = False):
    """Decadic absorbance A = -log10(T); ``percent=True`` for %T input.

    Values of T <= 0 have no absorbance and raise :class:`SpectrumError`.

    Examples
    --------
    >>> float(transmittance_to_absorbance(0.1)), float(transmittance_to_absorbance(1.0, True))
    (1.0, 2.0)
    """
    t = np.asarray(t, dtype=float)
    if percent:
        t = t / 100.0
    if np.any(t <= 0):
        bad = int(np.flatnonzero(t <= 0)[0])
        raise SpectrumError(
            "transmittance must be > 0 to convert to absorbance; "
            f"value #{bad} is {float(t.flat[bad])!r}"
        )
    return -np.log10(t)


def absorbance_to_transmittance(a, percent: bool = False):
    """Transmittance T = 10**-A (as %T with ``percent=True``).

    Examples
    --------
    >>> float(absorbance_to_transmittance(1.0)), float(absorbance_to_transmittance(2.0, True))
    (0.1, 1.0)
    """
    t = 10.0 ** -np.asarray(a, dtype=float)
    return t * 100.0 if percent else t


# canonical unit in a file -> {kit unit: converter(x, observe_mhz)}
_TO_KIT = {
    ("eV", "nm"): lambda x, f: ev_to_nm(x),
    ("cm-1", "nm"): lambda x, f: wavenumber_to_nm(x),
    ("um", "cm-1"): lambda x, f: 1e4 / np.asarray(x, dtype=float),
    ("nm", "cm-1"): lambda x, f: nm_to_wavenumber(x),
    ("Hz", "ppm"): lambda x, f: hz_to_ppm(x, f),
}


def to_kit_x(x, unit: str, kit_unit: str, observe_mhz: float | None = None):
    """Convert x values from a canonical file unit to the kit's unit for a technique.

    Raises :class:`SpectrumError` when no conversion exists (e.g. ppm to nm),
    or when Hz -> ppm is asked without the spectrometer frequency.

    Examples
    --------
    >>> to_kit_x([2.0], "eV", "nm").round(2).tolist()
    [619.92]
    >>> to_kit_x([12500.0], "Hz", "ppm", observe_mhz=125.0).tolist()
    [100.0]
    """
    if unit == kit_unit:
        return np.asarray(x, dtype=float)
    conv = _TO_KIT.get((unit, kit_unit))
    if conv is None:
        raise SpectrumError(f"cannot convert x from {unit!r} to {kit_unit!r}")
    return conv(x, observe_mhz)
