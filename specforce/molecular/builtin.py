"""The built-in spectroscopy: line lists generated from published molecular constants.

A full line list cannot ship with specforce, so without an imported store it
uses lines that it generates itself from the constants in ``linedata/`` (see
:mod:`specforce.molecular.linegen`). Today this covers CO2 (the 15 um and 4.3 um band
systems of five isotopologues from a Fermi-polyad model, and the two 10 um
bands), H2O (the pure rotation band, nu2 and the hot bands 010-010 and 020-010
of H2(16)O, H2(18)O, H2(17)O and HDO), CH4 (nu4, nu2, their hot bands and the
pentad bands of 12CH4, nu4 of 13CH4), N2O (nu2, 2nu2, nu1, nu3 and hot bands of
14N2(16)O) and O3 (nu3, nu1, nu2 and the pure rotation band of 16O3). Import a
full list for a complete calculation.

The generated set is cached in the user's cache directory
(``$XDG_CACHE_HOME/specforce`` or ``~/.cache/specforce``), keyed by the sha256 of
the constants tables and the generator version, so it is generated once.
"""

from __future__ import annotations

import hashlib
import os

import numpy as np


from .linegen.asymmetric import generate_h2o, generate_o3, load_h2o_table, load_o3_table
from .linegen.co2 import generate_co2, load_co2_table
from .linegen.linear import generate_n2o, load_n2o_table
from .linegen.spherical import generate_ch4, load_ch4_table
from ..io.linestore import load_spectroscopy, open_store, write_store
from .lines import LineList
from ..cache import cache_folder
from ..errors import SettingsError

__all__ = ["builtin_spectroscopy", "generate_builtin_lines", "generate_builtin_store", "BUILTIN_ACCURACY",
           "BUILTIN_ACCURACY_COMMON", "GENERATOR_VERSION", "GENERATED_MOLECULES", "accuracy_statements",
           "builtin_accuracy_text"]

GENERATOR_VERSION = "12"
#: The molecules with a line generator, and the function and constants table of each.
GENERATED_MOLECULES = {"CO2": (generate_co2, load_co2_table), "H2O": (generate_h2o, load_h2o_table),
                       "CH4": (generate_ch4, load_ch4_table), "N2O": (generate_n2o, load_n2o_table),
                       "O3": (generate_o3, load_o3_table)}
#: What the built-in set can claim, per gas, for outputs and the README: ``lines`` says what the
#: generated lines are and how they compare with real lists; ``forcing`` is the measured accuracy
#: of a forcing computed with them, the statement every forcing output carries for a changed gas.
#: Forcings measured on the AFGL area mean at the top of the atmosphere against the line-by-line
#: benchmarks of Pincus et al. (2020), J. Geophys. Res. 125, e2020JD033483; water against a real
#: list of the main isotopologue, mid-latitude summer.
BUILTIN_ACCURACY = {
    "CO2": {
        "lines": "15 um and 4.3 um systems of 626, 636, 628, 627 and 638 from a Fermi-polyad model normalised to "
                 "two fundamentals from memory, the 10 um bands from an Einstein A from memory (low confidence), "
                 "empirical widths; no combination bands near 2000 cm-1 or 10 um hot bands",
        "forcing": "built-in CO2 lines: 2xCO2 forcing about 8 % above line-by-line benchmarks (2.928 vs 2.709 "
                   "W m-2, Pincus et al. 2020); the forcing per doubling falls about 6 % from 0.5x-1x to 4x-8x, "
                   "where line-by-line models rise by 1-3 %; the 10 um bands' intensities rest on an Einstein A "
                   "from memory: half or twice their value gives 2.821 or 3.087 W m-2; import a line list for CO2 "
                   "work",
    },
    "H2O": {
        "lines": "pure rotation and nu2 of H2(16)O, and of H2(18)O, H2(17)O and HDO by isotopic substitution, the "
                 "hot bands 010-010 and 020-010, empirical widths; against a real water list of the main "
                 "isotopologue the rotational band agrees within 2 % in 25 cm-1 bins, the nu2 band (with a derived "
                 "rotational dependence of its transition moment) is 15 % weak, the pure rotation carries the "
                 "bend's centrifugal distortion dipole",
        "forcing": "built-in H2O lines: H2O-only OLR about 0.9 % above and surface downward flux about 2.9 % "
                   "below a real line list (mid-latitude summer); import a line list for water-vapour work",
    },
    "CH4": {
        "lines": "nu4 and nu2 of 12CH4 with band intensities from memory, their hot bands from a harmonic "
                 "transition-moment model, the pentad bands nu3, nu2+nu4 and 2nu4 from memory, nu4 of 13CH4 by "
                 "abundance, and a tetrahedral splitting with the pattern of the rank-4 tetrahedral operator and a "
                 "width of our own estimate",
        "forcing": "built-in CH4 lines: about 35 % below line-by-line benchmarks (0.397 vs 0.613 W m-2, Pincus "
                   "et al. 2020); import a line list for CH4 work",
    },
    "N2O": {
        "lines": "nu2, 2nu2, nu1, nu3 and hot bands of 14N2(16)O, band intensities from memory; against a real "
                 "list the nu2 lines lie within 0.03 cm-1 and sum 9 % high",
        "forcing": "built-in N2O lines: about 10 % above line-by-line benchmarks (0.225 vs 0.205 W m-2, Pincus "
                   "et al. 2020); import a line list for N2O work",
    },
    "O3": {
        "lines": "nu3, nu1, nu2 and pure rotation of 16O3, band intensities from memory, no hot bands",
        "forcing": "built-in O3 lines: band intensities from memory, not measured against line-by-line "
                   "benchmarks; import a line list for O3 work",
    },
}
#: What holds for every built-in gas, and the continuum.
BUILTIN_ACCURACY_COMMON = (
    "the H2O continuum only in 800-1250 cm-1 (without the far-infrared and 6.3 um continua OLR is too high, the "
    "surface downward flux too low and the CO2 surface forcing too high); individual line parameters can be off by "
    "several per cent")


def builtin_accuracy_text():
    """Everything :data:`BUILTIN_ACCURACY` says, in one paragraph (for provenance and line stores)."""
    gases = "; ".join(f"{g} ({d['lines']}; {d['forcing'].split(': ', 1)[1]})" for g, d in BUILTIN_ACCURACY.items())
    return f"built-in lines generated from molecular constants: {gases}; {BUILTIN_ACCURACY_COMMON}"


def accuracy_statements(gases, provenance):
    """The measured accuracy of the built-in lines for each of ``gases`` that uses them.

    Parameters
    ----------
    gases : iterable of str
        The gases changed.
    provenance : dict
        The spectroscopy's provenance (``Spectroscopy.provenance``): says which gases come
        from the built-in lines and which from an imported list.

    Returns
    -------
    list of str
        One statement per gas with built-in lines (none for gases from an imported list
        alone; gases an imported list covers in part are marked so).
    """
    kind = str(provenance.get("kind", ""))
    out = []
    for gas in dict.fromkeys(gases):
        entry = BUILTIN_ACCURACY.get(gas)
        if entry is None:
            continue
        if kind.startswith("built-in"):
            out.append(entry["forcing"])
        elif kind == "combined":
            if gas not in provenance.get("imported_gases", []):
                out.append(entry["forcing"])
            elif provenance.get("coverage", {}).get(gas, {}).get("built_in"):
                out.append(f"{gas} from the imported list where it has lines, built-in elsewhere; there the "
                           + entry["forcing"])
    return out


def _key():
    digests = ":".join(load()[1] for _, load in GENERATED_MOLECULES.values())
    return hashlib.sha256(f"{digests}:{GENERATOR_VERSION}".encode()).hexdigest()[:16]


def generate_builtin_lines(molecules=None):
    """The generated lines of ``molecules`` (default all in :data:`GENERATED_MOLECULES`), merged.

    Returns
    -------
    LineList
        Sorted by wavenumber; ``provenance["generator"]`` lists each molecule's table and bands.
    """
    names = [m.upper() for m in (molecules or GENERATED_MOLECULES)]
    unknown = [m for m in names if m not in GENERATED_MOLECULES]
    if unknown:
        raise SettingsError(f"no line generator for {', '.join(unknown)}; available: {', '.join(GENERATED_MOLECULES)}")
    parts = [GENERATED_MOLECULES[m][0]() for m in names]
    cols = {k: np.concatenate([p.columns[k] for p in parts]) for k in parts[0].columns}
    order = np.argsort(cols["wavenumber"], kind="stable")
    return LineList({k: v[order] for k, v in cols.items()},
                    {"generator": {"molecules": {m: p.provenance["generator"] for m, p in zip(names, parts)}}})


def generate_builtin_store(path, molecules=None):
    """Generate the built-in line set (or some of its molecules) and write it to a line store at ``path``."""
    lines = generate_builtin_lines(molecules)
    gen = dict(lines.provenance["generator"])
    gen["generator_version"] = GENERATOR_VERSION
    gen["accuracy"] = builtin_accuracy_text()
    write_store(lines, path, extra_attrs={"generator": gen})
    return path


def builtin_spectroscopy():
    """The built-in :class:`~specforce.radiation.longwave.Spectroscopy`, generated once and cached."""
    path = os.path.join(cache_folder(), f"builtin-{_key()}.h5")
    if not os.path.exists(path):
        generate_builtin_store(path)
    spec = load_spectroscopy(path)
    with open_store(path) as st:
        gen = st.provenance.get("generator", {})
    spec.provenance = {"kind": "built-in (generated from molecular constants)", "store": path,
                       "tables_sha256": {m: d.get("table_sha256") for m, d in gen.get("molecules", {}).items()},
                       "generator_version": gen.get("generator_version"), "accuracy": builtin_accuracy_text()}
    return spec
