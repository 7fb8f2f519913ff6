"""The invented demo scenario: a made-up lab, its HPLC fractions and synthetic spectra.

The files are generated on demand (``cageprint demo --ensure`` or
:func:`ensure_demo`) by a seeded generator, so they are reproducible byte for
byte and never committed.  ``truth.json`` beside them says what each fraction
really holds; the notebook tests check conclusions against it.
"""

from __future__ import annotations

import hashlib
import json
import os
import pathlib

from .build import GENERATOR_VERSION, SEED, generate
from .scenario import FRACTIONS, LAB, SYNTHETIC_NOTE, fraction

__all__ = ["ensure_demo", "is_current", "load_truth", "default_demo_dir", "generate",
           "FRACTIONS", "LAB", "SYNTHETIC_NOTE", "SEED", "GENERATOR_VERSION", "fraction"]

#: folder name of the demo data next to the notebooks
DEMO_DIRNAME = "demo-data"


def default_demo_dir() -> pathlib.Path:
    """``notebooks/demo-data`` of the source tree, else ``./demo-data``."""
    here = pathlib.Path(__file__).resolve()
    for parent in here.parents:
        if (parent / "pyproject.toml").exists() and (parent / "notebooks").is_dir():
            return parent / "notebooks" / DEMO_DIRNAME
    return pathlib.Path(DEMO_DIRNAME)


def is_current(out: str | os.PathLike) -> bool:
    """True when ``out`` holds the files this generator version writes, unchanged.

    Examples
    --------
    >>> is_current("no/such/folder")
    False
    """
    out = pathlib.Path(out)
    try:
        manifest = json.loads((out / "manifest.json").read_text())
    except (OSError, ValueError):
        return False
    if manifest.get("generator_version") != GENERATOR_VERSION or manifest.get("seed") != SEED:
        return False
    for name, digest in manifest.get("files", {}).items():
        p = out / name
        if not p.is_file() or hashlib.sha256(p.read_bytes()).hexdigest() != digest:
            return False
    return bool(manifest.get("files"))


def ensure_demo(out: str | os.PathLike | None = None) -> pathlib.Path:
    """Write the demo data into ``out`` unless they are already there and current.

    Returns the folder.  ``out`` defaults to :func:`default_demo_dir`.
    """
    folder = pathlib.Path(out) if out is not None else default_demo_dir()
    if not is_current(folder):
        generate(folder)
    return folder


def load_truth(out: str | os.PathLike | None = None) -> dict:
    """The scenario's truth table (``truth.json``), generating the data if needed."""
    folder = ensure_demo(out)
    return json.loads((folder / "truth.json").read_text())
