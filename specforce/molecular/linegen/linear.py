"""Vibration-rotation lines of linear molecules (CO2, N2O) from band constants.

:func:`band_lines` enumerates one band's lines for any linear molecule; the N2O list is
generated here from its band table, the CO2 list by :mod:`specforce.molecular.linegen.co2`, which
derives its bands from a polyad model.

For each band (upper <- lower vibrational level) the lines of the P, Q and R
branches are enumerated with

* term values  E(v, J) = G_v + B_v J(J+1) - D_v [J(J+1)]^2 +- (q_v/2) J(J+1)
  (- for e, + for f levels with q > 0, l-type doubling only for l = 1: the f
  levels lie higher, as the real N2O list's 0110 levels show; the same sign is
  taken for CO2, whose q is positive in the same convention), where G_v is the
  level's band centre, which already contains the -B_v l^2 term of Herzberg's
  F(J) = B[J(J+1) - l^2] (the convention of the CO2 level tables, so that the
  nu2 Q branch starts at the 667.38 cm-1 band centre; Herzberg 1945, Ch. IV.1);
* selection rules Delta J = 0, +-1 with e<->e and f<->f in P and R, e<->f in Q,
  and Q branches only when l' or l'' is non-zero;
* nuclear-spin statistics of 16O-C-16O (spin-0 oxygen): a level exists only if
  J + [f] + [u] is even, where u marks vibrational levels with v2 + v3 odd
  (Herzberg 1945, Ch. I.3 and IV.1); molecules and isotopologues without a centre
  of symmetry (N2O, 16O-12C-18O) keep every level;
* Honl-London factors for parallel (Delta l = 0) and perpendicular
  (Delta l = +-1) bands of linear molecules (Herzberg 1945, Table 11 and
  Eq. IV,77-78, as quoted in Rothman et al. 1992, Table 3; from memory);
* intensities S_i = S_band w_i / sum(w) with
  w = HL g_ns exp(-c2 E''_rot / T0) nu (1 - exp(-c2 nu / T0)) at T0 = 296 K,
  so that each band sums to its tabulated 296 K intensity (Herman-Wallis
  factors are not included).
"""

from __future__ import annotations

import tomllib
from importlib import resources

import numpy as np

from ...constants import REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K
from ..lines import LineList
from . import append_blank_text, append_line_parameters, finish_columns, new_columns
from ..molecules import isotopologues, molecule_id

__all__ = ["load_band_table", "load_n2o_table", "honl_london", "band_lines", "line_quanta", "generate_n2o", "J_MAX"]

J_MAX = 130


def load_band_table(name="n2o_bands.toml"):
    """A linear-molecule band table from ``linedata/`` (default N2O) and its bytes' sha256."""
    import hashlib

    raw = resources.files("specforce.linedata").joinpath(name).read_bytes()
    return tomllib.loads(raw.decode()), hashlib.sha256(raw).hexdigest()


def load_n2o_table():
    """The N2O band table (``linedata/n2o_bands.toml``) and its bytes' sha256."""
    return load_band_table("n2o_bands.toml")


def honl_london(j_lower, delta_j, l_lower, delta_l):
    """Honl-London factor of a linear-molecule line [dimensionless].

    Parameters
    ----------
    j_lower : array_like
        J'' of the lower level.
    delta_j : int
        -1 (P), 0 (Q) or +1 (R).
    l_lower : int
        Vibrational angular momentum l'' >= 0.
    delta_l : int
        0 (parallel band) or +1/-1 (perpendicular band, |l'| = l'' +- 1).

    Notes
    -----
    Parallel: R (J+1+l)(J+1-l)/(J+1), Q l^2 (2J+1)/(J(J+1)), P (J+l)(J-l)/J.
    Perpendicular, with s = +1 for Delta l = +1 and -1 for Delta l = -1 (L = s l''):
    R (J+2+L)(J+1+L)/(2(J+1)), Q (J+1+L)(J-L)(2J+1)/(2J(J+1)), P (J-1-L)(J-L)/(2J).
    For every J'' the factors of the three branches add to 2J''+1 (the sum rule).
    """
    j = np.asarray(j_lower, dtype=float)
    lo = float(l_lower)
    with np.errstate(divide="ignore", invalid="ignore"):
        if delta_l == 0:
            if delta_j == 1:
                hl = (j + 1 + lo) * (j + 1 - lo) / (j + 1)
            elif delta_j == 0:
                hl = np.where(j > 0, lo * lo * (2 * j + 1) / (j * (j + 1)), 0.0)
            else:
                hl = np.where(j > 0, (j + lo) * (j - lo) / j, 0.0)
        else:
            big_l = lo * delta_l
            if delta_j == 1:
                hl = (j + 2 + big_l) * (j + 1 + big_l) / (2 * (j + 1))
            elif delta_j == 0:
                hl = np.where(j > 0, (j + 1 + big_l) * (j - big_l) * (2 * j + 1) / (2 * j * (j + 1)), 0.0)
            else:
                hl = np.where(j > 0, (j - 1 - big_l) * (j - big_l) / (2 * j), 0.0)
    return np.maximum(np.nan_to_num(hl), 0.0)


def _term(level, j, ef):
    g, b, d, q, ell = level
    x = j * (j + 1.0)
    e = g + b * x - d * x * x
    if ell == 1:
        e = e + np.where(ef == 1, 0.5, -0.5) * q * j * (j + 1.0)
    return e


def _is_u(code):
    return (int(code[1]) + int(code[3])) % 2 == 1


def _exists(code, j, ef, symmetric):
    if not symmetric:
        return np.ones_like(j, dtype=bool)
    return (j + ef + (1 if _is_u(code) else 0)) % 2 == 0


def band_lines(iso, upper_code, lower_code, levels, s_band, temperature=REFERENCE_TEMPERATURE, symmetric=False):
    """Lines of one band: wavenumber, intensity, E'', J'', J', branch, e/f labels.

    Parameters
    ----------
    iso : str
        Isotopologue code ("626", "636", "628", "446").
    upper_code, lower_code : str
        Level codes, v1 v2 l2 v3 r for CO2 (e.g. "01101") and v1 v2 l2 v3 for N2O
        (e.g. "0110").
    levels : dict
        Level constants [G, B, D, q, l] of the isotopologue.
    s_band : float
        Band intensity at 296 K [cm-1/(molecule cm-2)].
    temperature : float
        Reference temperature of the intensities [K].
    symmetric : bool
        The isotopologue has a centre of symmetry and spin-0 end atoms (16O-C-16O,
        18O-C-18O): every other rotational level is missing.

    Returns
    -------
    dict of numpy.ndarray
    """
    up, lo = levels[upper_code], levels[lower_code]
    l_up, l_lo = int(up[4]), int(lo[4])
    dl = l_up - l_lo
    if abs(dl) > 1:
        raise ValueError(f"band {upper_code}-{lower_code}: |Delta l| > 1 is forbidden")
    rows = []
    j = np.arange(0, J_MAX + 1, dtype=float)
    ef_lower = (0,) if l_lo == 0 else (0, 1)
    for ef_lo in ef_lower:
        for dj, branch in ((-1, "P"), (0, "Q"), (1, "R")):
            if dj == 0 and l_up == 0 and l_lo == 0:
                continue
            ef_up = ef_lo if dj != 0 else 1 - ef_lo
            if l_up == 0 and ef_up == 1:
                continue
            jl = j
            ju = j + dj
            ok = (jl >= l_lo) & (ju >= l_up) & (ju >= 0)
            ok &= _exists(lower_code, jl, ef_lo, symmetric) & _exists(upper_code, ju, ef_up, symmetric)
            if not ok.any():
                continue
            jl, ju = jl[ok], ju[ok]
            e_lo = _term(lo, jl, np.full(jl.size, ef_lo))
            e_up = _term(up, ju, np.full(ju.size, ef_up))
            hl = honl_london(jl, dj, l_lo, 0 if dl == 0 else int(np.sign(dl)))
            # for l'' > 0 the Honl-London factor counts both e and f parts of J''
            rows.append((e_up - e_lo, e_lo, jl, ju, hl, branch, ef_lo, ef_up))
    nu = np.concatenate([r[0] for r in rows])
    e_lo = np.concatenate([r[1] for r in rows])
    jl = np.concatenate([r[2] for r in rows])
    ju = np.concatenate([r[3] for r in rows])
    hl = np.concatenate([r[4] for r in rows])
    branch = np.concatenate([np.full(r[2].size, r[5]) for r in rows])
    ef_lo = np.concatenate([np.full(r[2].size, r[6]) for r in rows])
    ef_up = np.concatenate([np.full(r[2].size, r[7]) for r in rows])
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    e_rot = e_lo - lo[0]
    w = hl * np.exp(-c2 * e_rot / temperature) * nu * -np.expm1(-c2 * nu / temperature)
    keep = (hl > 0) & (nu > 0)
    w = np.where(keep, w, 0.0)
    s = s_band * w / w.sum()
    sel = s > 0
    return {
        "wavenumber": nu[sel], "intensity": s[sel], "lower_energy": e_lo[sel], "j_lower": jl[sel], "j_upper": ju[sel],
        "branch": branch[sel], "ef_lower": ef_lo[sel], "ef_upper": ef_up[sel],
    }


def _band_intensity(band, table, iso_abund, main_iso):
    """S_band at 296 K from the table: a number or 'derived' (harmonic scaling from the band named
    by ``parent``)."""
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    t0 = REFERENCE_TEMPERATURE
    value = band["intensity"]
    if isinstance(value, (int, float)):
        return float(value)
    iso = band["iso"]
    if value == "derived":
        lv = table["levels"][iso]
        up, lo = lv[band["upper"]], lv[band["lower"]]
        parent, ground = band["parent"]
        ref = next(b for b in table["band"] if b["iso"] == iso and b["upper"] == parent and b["lower"] == ground)
        nu_ref = lv[parent][0]
        nu = up[0] - lo[0]
        g_lo = 2 if lo[4] > 0 else 1
        pop = g_lo * np.exp(-c2 * lo[0] / t0)
        stim = -np.expm1(-c2 * nu / t0) / -np.expm1(-c2 * nu_ref / t0)
        return float(ref["intensity"]) * band["harmonic_factor"] * pop * (nu / nu_ref) * stim
    raise ValueError(f"band table: band intensity {value!r} is not a number or 'derived'")


def line_quanta(cols, upper_code, lower_code, lines):
    """Append one band's quanta columns: the level codes (global) and branch, J'' and e/f (local)."""
    n = lines["wavenumber"].size
    cols["global_upper"].append(np.full(n, _quanta(upper_code).encode()))
    cols["global_lower"].append(np.full(n, _quanta(lower_code).encode()))
    cols["local_upper"].append(np.full(n, b" " * 15))
    local = [f"{b} {int(j):3d}{'ef'[e]}".rjust(15).encode() for b, j, e in
             zip(lines["branch"], lines["j_lower"], lines["ef_lower"])]
    cols["local_lower"].append(np.array(local, dtype="S15"))


def _quanta(code):
    if len(code) == 4:  # N2O: v1 v2 l2 v3
        return f"{code[0]} {code[1]} {code[2]} {code[3]}".rjust(15)
    return f"{code[0]:>7} {code[1]} {code[2]} {code[3]}{code[4]}".rjust(15)


def generate_n2o():
    """Generate the built-in N2O line list.

    Returns
    -------
    LineList
        Lines of the bands in ``linedata/n2o_bands.toml`` (nu2, its hot bands, 2nu2,
        nu1, nu3 and their hot bands of 14N2(16)O), in record units, with provenance.
    """
    return _generate_linear("N2O", "n2o_bands.toml", "446")


def _generate_linear(molecule, table_name, main_iso):
    table, digest = load_band_table(table_name)
    isos = {i.code: i for i in isotopologues(molecule)}
    abund = {code: i.abundance for code, i in isos.items()}
    br = table["broadening"]
    # statistical weights in the record convention include the nuclear-spin degeneracy
    g_ns = table.get("nuclear_spin_weight", 1)
    cols = new_columns()
    bands = []
    for band in table["band"]:
        iso = band["iso"]
        s_band = _band_intensity(band, table, abund, main_iso)
        lines = band_lines(iso, band["upper"], band["lower"], table["levels"][iso], s_band)
        n = lines["wavenumber"].size
        m = np.abs(np.where(lines["branch"] == "P", -lines["j_lower"],
                            np.where(lines["branch"] == "R", lines["j_lower"] + 1, lines["j_lower"])))
        gamma_air = br["gamma_air_inf"] + br["gamma_air_amp"] * np.exp(-m / br["gamma_air_scale"])
        append_line_parameters(cols, molecule_id(molecule), isos[iso].local_id, lines["wavenumber"],
                               lines["intensity"], lines["lower_energy"], gamma_air, br)
        line_quanta(cols, band["upper"], band["lower"], lines)
        append_blank_text(cols, n)
        cols["g_upper"].append(g_ns * (2 * lines["j_upper"] + 1))
        cols["g_lower"].append(g_ns * (2 * lines["j_lower"] + 1))
        bands.append({"iso": iso, "upper": band["upper"], "lower": band["lower"], "lines": int(n),
                      "intensity_296K": s_band, "basis": band["basis"]})
    out = finish_columns(cols)
    return LineList(out, {"generator": {"molecule": molecule, "table": f"linedata/{table_name}",
                                        "table_sha256": digest, "bands": bands}})
