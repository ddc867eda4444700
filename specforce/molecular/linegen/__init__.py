"""Line lists generated from published molecular constants (the built-in spectroscopy). Takes the
constants tables in ``specforce/linedata/``; gives a LineList per molecule, with provenance.

Modules: :mod:`specforce.molecular.linegen.co2` for the CO2 band system,
:mod:`specforce.molecular.linegen.linear` for linear molecules (N2O),
:mod:`specforce.molecular.linegen.asymmetric` for asymmetric tops (H2O, O3; their levels and
line strengths from :mod:`specforce.molecular.linegen.asymmetric_rotor`, the water isotopologues
from :mod:`specforce.molecular.linegen.water_isotopes` and :mod:`specforce.molecular.linegen.normal_modes`) and
:mod:`specforce.molecular.linegen.spherical` for spherical tops (CH4). The generated lines
are ordinary :class:`~specforce.molecular.lines.LineList`\\ s in the units of the
160-character record, so everything downstream treats them like imported lines.
The helpers below hold the column bookkeeping the generators share.
"""

import numpy as np

RECORD_COLUMNS = ("molecule", "isotopologue", "wavenumber", "intensity", "einstein_a", "gamma_air", "gamma_self",
                  "lower_energy", "n_air", "delta_air", "global_upper", "global_lower", "local_upper", "local_lower",
                  "uncertainty", "references", "line_mixing", "g_upper", "g_lower")


def new_columns():
    """Empty lists, one per record column, to append a band's arrays to."""
    return {k: [] for k in RECORD_COLUMNS}


def append_line_parameters(cols, molecule, isotopologue, wavenumber, intensity, lower_energy, gamma_air, broadening,
                           einstein_a=None):
    """Append one band's numeric columns.

    Parameters
    ----------
    cols : dict
        From :func:`new_columns`.
    molecule, isotopologue : int
        Molecule and isotopologue numbers.
    wavenumber, intensity, lower_energy, gamma_air : numpy.ndarray
        [cm-1], [cm-1/(molecule cm-2) at 296 K], [cm-1], [cm-1 atm-1].
    broadening : dict
        ``self_to_air`` (self width / air width), ``n_air`` and ``delta_air`` [cm-1 atm-1].
    einstein_a : numpy.ndarray, optional
        [s-1]; NaN when not given.
    """
    n = wavenumber.size
    cols["molecule"].append(np.full(n, molecule, np.uint8))
    cols["isotopologue"].append(np.full(n, isotopologue, np.uint8))
    cols["wavenumber"].append(wavenumber)
    cols["intensity"].append(intensity)
    cols["einstein_a"].append(np.full(n, np.nan) if einstein_a is None else einstein_a)
    cols["gamma_air"].append(gamma_air)
    cols["gamma_self"].append(gamma_air * broadening["self_to_air"])
    cols["lower_energy"].append(lower_energy)
    cols["n_air"].append(np.full(n, broadening["n_air"]))
    cols["delta_air"].append(np.full(n, broadening["delta_air"]))


def append_blank_text(cols, n):
    """Append the record's text columns that generated lines leave empty (uncertainty codes,
    references, line-mixing flag) for ``n`` lines."""
    cols["uncertainty"].append(np.full(n, b"000000"))
    cols["references"].append(np.full(n, b" " * 12))
    cols["line_mixing"].append(np.full(n, b" "))


def finish_columns(cols):
    """Concatenate the appended arrays and sort every column by wavenumber."""
    out = {k: np.concatenate(v) for k, v in cols.items()}
    order = np.argsort(out["wavenumber"], kind="stable")
    return {k: v[order] for k, v in out.items()}
