"""Measured spectra: one model, readers behind one loader, processing."""

from .model import TECHNIQUES, Spectrum

__all__ = ["Spectrum", "TECHNIQUES"]
