"""Raw 13C experiment folders written by nmrglue's own writers from a known synthetic signal.

The signal is invented (lines at chosen ppm, widths and areas, a C6D6 lock triplet, a
known phase error and a digital-filter delay); the folders are written with
``nmrglue.bruker.write`` / ``nmrglue.varian.write``, an implementation independent of the
kit's reader.  Used by tests/test_rawnmr.py and tests/benchmarks/bench_rawdata.py.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

#: the invented cage lines: (ppm, relative area); two of them 0.012 ppm apart
LINES = ((150.10, 1.0), (147.30, 2.0), (145.000, 1.0), (144.988, 1.0), (142.10, 2.0),
         (138.00, 1.0), (133.40, 0.5))


@dataclass(frozen=True)
class Signal:
    """What a synthetic experiment holds (the truth the tests check against)."""

    mhz: float = 125.7
    sw_ppm: float = 250.0
    carrier_ppm: float = 100.0
    complex_points: int = 32768
    width_hz: float = 0.8
    lines: tuple = LINES
    solvent: str = "C6D6"
    lock_ppm: float = 128.06
    lock_j_hz: float = 24.3  # J(C,D) of C6D6, from memory
    lock_area: float = 1.5
    p0: float = 37.0  # phase error (degrees) put into the data
    p1: float = -25.0  # across the full width, pivot at the high-ppm edge
    group_delay: float = 0.0
    noise: float = 0.002
    seed: int = 7
    extra: dict = field(default_factory=dict)

    @property
    def sw_hz(self) -> float:
        return self.sw_ppm * self.mhz

    def all_lines(self):
        out = [(p, a) for p, a in self.lines]
        for k in (-1, 0, 1):
            out.append((self.lock_ppm + k * self.lock_j_hz / self.mhz, self.lock_area / 3))
        return out

    def phase_error_deg(self, ppm: float) -> float:
        f = (ppm - self.carrier_ppm) * self.mhz
        x = 0.5 - f / self.sw_hz  # 0 at the high-ppm edge, 1 at the low
        return self.p0 + self.p1 * x


def fid(sig: Signal) -> np.ndarray:
    """The complex FID, delayed by the digital filter's ``group_delay`` points (zeros before)."""
    t = (np.arange(sig.complex_points) - sig.group_delay) / sig.sw_hz
    r2 = math.pi * sig.width_hz
    out = np.zeros(sig.complex_points, complex)
    for ppm, area in sig.all_lines():
        f = (ppm - sig.carrier_ppm) * sig.mhz
        ph = math.radians(sig.phase_error_deg(ppm))
        out += area * np.exp(1j * (2 * math.pi * f * t + ph) - r2 * t) * (t >= 0)
    rng = np.random.default_rng(sig.seed)
    out += sig.noise * (rng.normal(size=out.size) + 1j * rng.normal(size=out.size))
    return out


def write_bruker(folder: Path, sig: Signal = Signal(), *, scale: float = 2e5,
                 float64: bool = False) -> Path:
    """A Bruker-layout experiment folder (``fid`` + ``acqus``) written by nmrglue."""
    import nmrglue as ng

    data = fid(sig) * scale
    if not float64:
        data = np.round(data.real) + 1j * np.round(data.imag)
    u = {"ndim": 1, 0: {"size": sig.complex_points, "complex": True, "encoding": "direct",
                        "sw": sig.sw_hz, "obs": sig.mhz, "car": sig.carrier_ppm * sig.mhz,
                        "label": "13C", "time": True, "freq": False}}
    dic = ng.bruker.create_dic(u)
    dic["acqus"].update({
        "TD": 2 * sig.complex_points, "SW_h": sig.sw_hz, "BF1": sig.mhz,
        "SFO1": sig.mhz + sig.carrier_ppm * sig.mhz / 1e6, "O1": sig.carrier_ppm * sig.mhz,
        "GRPDLY": sig.group_delay, "BYTORDA": 0, "DTYPA": 2 if float64 else 0, "AQ_mod": 3,
        "NUC1": "13C", "SOLVENT": sig.solvent, "DATE": 1764806400, "PARMODE": 0,
        **sig.extra})
    folder.mkdir(parents=True, exist_ok=True)
    ng.bruker.write(str(folder), dic, data.astype(np.complex128), overwrite=True,
                    isfloat=float64)
    return folder


def _pparam(name: str, value, basictype: str = "1"):
    import nmrglue as ng

    d = ng.varian.create_pdic_param(name, [str(value)])
    d["basictype"] = basictype
    return d


def write_varian(folder: Path, sig: Signal = Signal(), *, scale: float = 2e5) -> Path:
    """A Varian/Agilent-layout experiment folder (``fid`` + ``procpar``) written by nmrglue."""
    import nmrglue as ng

    data = (fid(sig) * scale).astype(np.complex64)
    u = {"ndim": 1, 0: {"size": sig.complex_points, "complex": True, "encoding": "direct",
                        "sw": sig.sw_hz, "obs": sig.mhz, "car": sig.carrier_ppm * sig.mhz,
                        "label": "C13", "time": True, "freq": False}}
    dic = ng.varian.create_dic(u)
    # referencing: the carrier sits at carrier_ppm; rfl is the reference line's distance
    # from the right (low-frequency) edge, rfp its shift in Hz (0 ppm here)
    rfl = sig.sw_hz / 2 - sig.carrier_ppm * sig.mhz
    for name, value in (("sw", sig.sw_hz), ("sfrq", sig.mhz), ("rfl", rfl), ("rfp", 0.0),
                        ("reffrq", sig.mhz)):
        dic["procpar"][name] = _pparam(name, value)
    for name, value in (("tn", "C13"), ("solvent", sig.solvent),
                        ("time_complete", "20261204T010000")):
        dic["procpar"][name] = _pparam(name, value, basictype="2")
    folder.mkdir(parents=True, exist_ok=True)
    ng.varian.write(str(folder), dic, data, overwrite=True)
    return folder
