"""The built-in spectroscopy: line lists generated from published molecular constants.

A full line list cannot ship with specforce, so without an imported store it
uses lines that it generates itself from the constants in ``linedata/`` (see
:mod:`specforce.linegen`). Today this covers CO2 (its 15 um band system, the
10 um bands and nu3 for the main isotopologue, and the fundamentals of 636 and
628); water vapour enters only through its window continuum until its
generator exists, and other gases not at all. Results with the built-in set are
therefore CO2-centred estimates; import a full list for a complete calculation.

The generated set is cached in the user's cache directory
(``$XDG_CACHE_HOME/specforce`` or ``~/.cache/specforce``), keyed by the sha256 of
the constants tables and the generator version, so it is generated once.
"""

from __future__ import annotations

import hashlib
import os

from .linestore import open_store, write_store
from .linegen.linear import generate_co2, load_band_table
from .longwave import load_spectroscopy

__all__ = ["builtin_spectroscopy", "generate_builtin_store", "cache_dir", "BUILTIN_ACCURACY", "GENERATOR_VERSION"]

GENERATOR_VERSION = "1"
#: What the built-in set can claim, in words, for outputs and the README.
BUILTIN_ACCURACY = (
    "built-in CO2 lines generated from molecular constants (band intensities partly from memory and "
    "harmonic scaling, empirical widths); no generated H2O, O3, N2O or CH4 lines yet, H2O enters only "
    "through the 800-1250 cm-1 continuum; expect CO2 forcing to be overestimated where water vapour "
    "lines would overlap, and individual line parameters to be off by several per cent"
)


def cache_dir():
    """Folder of specforce's cache (created if needed)."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    path = os.path.join(base, "specforce")
    os.makedirs(path, exist_ok=True)
    return path


def _key():
    _, digest = load_band_table()
    return hashlib.sha256(f"{digest}:{GENERATOR_VERSION}".encode()).hexdigest()[:16]


def generate_builtin_store(path):
    """Generate the built-in line set and write it to a line store at ``path``."""
    lines = generate_co2()
    gen = dict(lines.provenance["generator"])
    gen["generator_version"] = GENERATOR_VERSION
    gen["accuracy"] = BUILTIN_ACCURACY
    write_store(lines, path, extra_attrs={"generator": gen})
    return path


def builtin_spectroscopy():
    """The built-in :class:`~specforce.longwave.Spectroscopy`, generated once and cached."""
    path = os.path.join(cache_dir(), f"builtin-{_key()}.h5")
    if not os.path.exists(path):
        generate_builtin_store(path)
    spec = load_spectroscopy(path)
    with open_store(path) as st:
        gen = st.provenance.get("generator", {})
    spec.provenance = {"kind": "built-in (generated from molecular constants)", "store": path,
                       "table_sha256": gen.get("table_sha256"), "generator_version": gen.get("generator_version"),
                       "accuracy": BUILTIN_ACCURACY}
    return spec
