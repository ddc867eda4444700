"""The CO2 band system from a polyad model (the built-in CO2 lines).

Vibrational levels
------------------
Levels of a CO2 isotopologue are grouped into Fermi polyads (P = 2 v1 + v2, l, v3).
Within a polyad the basis states |v1, v2^l, v3> have zeroth-order term values
(relative to 00001, in the band-centre convention that includes the l^2 term)

    E0 = w1 v1 + w2 v2 + w3 v3 + x11 v1^2 + x22 v2^2 + x33 v3^2
         + x12 v1 v2 + x13 v1 v3 + x23 v2 v3 + g22 l^2

and the Fermi interaction couples |v1, v2^l> with |v1 - 1, (v2 + 2)^l>:

    W = (W0 + W3 v3) sqrt(v1 ((v2 + 2)^2 - l^2)) / 2,

the square root being the harmonic matrix element of q1 q2^2 (Herzberg 1945, Molecular
Spectra and Molecular Structure II, Ch. II.5; Amat and Pimbert 1965 for the l
dependence; from memory). Each polyad matrix is diagonalised: its eigenvalues are the
levels (ranked r = 1 highest, the notation of Rothman et al. 1992) and its
eigenvectors their Fermi mixing. For 12C16O2 the twelve constants are fitted by least
squares to observed level energies (``linedata/co2_polyads.toml``, from memory of
Rothman et al. 1992); where an observed energy or B is given it is used for the line
positions, the model supplying the mixing and the unobserved levels.

Other isotopologues take the fitted constants scaled by the ratios rho_i = w_i'/w_i of
harmonic frequencies from a valence force field with the masses (Wilson, Decius and
Cross 1955, the GF method; the bending G element 1/m1 + 1/m3 + 4/mC for equal bonds):
w_i' = rho_i w_i, x_ij' = rho_i rho_j x_ij, g22' = rho_2^2 g22 and W' = rho_1^(1/2) rho_2 W
(a cubic term f S1 S2^2 is proportional to w1^(1/2) w2 in dimensionless normal
coordinates). Rotational constants follow from the moments of inertia with the bond
length implied by 626's B0.

Band intensities
----------------
To first order the dipole is mu_perp ~ q2 and mu_par ~ q3. In the Fermi-mixed basis
the transition amplitude of a 15 um band (Delta P = +1, l' = l +- 1) is

    A = sum_a c_a d_a' sqrt(m(v2_a, l -> l')),   m = (v2 + l + 2)/2 or (v2 - l + 2)/2,

summed over basis states a of the lower level and their partners a' (same v1, v2 + 1)
in the upper level, m being the squared matrix element of q2 in the two-dimensional
harmonic oscillator in units of the fundamental's (Herzberg 1945, Ch. II.5). The band
intensity at 296 K relative to the nu2 fundamental is

    S / S(nu2) = A^2 exp(-c2 E'' / T0) (nu / nu2) (1 - exp(-c2 nu/T0)) / (1 - exp(-c2 nu2/T0)) * iso,

with E'' the lower level's energy (per l component; the two l components of a
degenerate level and the two upper components reached from an l = 0 level both give the
factor 2 that the fundamental has). The 4.3 um bands (Delta v3 = +1, same polyad) have
A = sqrt(v3 + 1) sum_a c_a d_a and a factor g_l = 2 for l > 0, relative to nu3. The
isotopic factor is the abundance ratio times the ratio of squared dipole derivatives
with respect to the normal coordinate at equal derivatives with respect to the valence
coordinates (the G-matrix rule; Crawford 1952, J. Chem. Phys. 20, 977; from memory).
Left out, and named in the provenance: second-order dipole terms (the combination bands
near 1900-2100 cm-1, and a few per cent of interference in the hot bands), Herman-Wallis
factors, the weak symmetric-stretch bands of the asymmetric isotopologues, and the
vibrational partition function's small isotopic difference.
"""

from __future__ import annotations

import hashlib
import json
import math
import tomllib
from dataclasses import dataclass
from importlib import resources

import numpy as np

from ...constants import REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K
from ...errors import MoleculeError
from ..lines import LineList
from ..lineparams import intensity_from_einstein_a
from ..molecules import isotopologue, isotopologues, molecule_id, partition_function
from . import append_blank_text, append_line_parameters, finish_columns, new_columns
from .co2_isotopes import isotopic_ratios, rotational_b
from .linear import band_lines, line_quanta

__all__ = ["load_co2_table", "PolyadModel", "fit_polyad_model", "co2_bands", "generate_co2", "laser_band_intensity",
           "Level", "Band"]

#: Names of the twelve constants of the vibrational model, in the order of ``start``.
CONSTANTS = ("w1", "w2", "w3", "x11", "x22", "x33", "x12", "x13", "x23", "g22", "W0", "W3")
#: Isotopologues with a centre of symmetry and spin-0 end atoms (every other rotational level missing).
SYMMETRIC = {"626", "636", "828", "838"}


def load_co2_table():
    """The CO2 polyad table (``linedata/co2_polyads.toml``) and its bytes' sha256."""
    raw = resources.files("specforce.linedata").joinpath("co2_polyads.toml").read_bytes()
    return tomllib.loads(raw.decode()), hashlib.sha256(raw).hexdigest()


def parse_code(code):
    """Level code v1 v2 l v3 r -> (P, l, v3, r)."""
    v1, v2, ell, v3, r = (int(c) for c in code)
    return 2 * v1 + v2, ell, v3, r


def level_code(p, ell, v3, r):
    """(P, l, v3, r) -> level code; v1 is the largest v1 of the polyad."""
    v1 = (p - ell) // 2
    return f"{v1}{p - 2 * v1}{ell}{v3}{r}"


def polyad_basis(p, ell):
    """Basis states (v1, v2) of polyad P with vibrational angular momentum l, v1 descending."""
    if p < ell or (p - ell) % 2:
        return []
    return [(v1, p - 2 * v1) for v1 in range((p - ell) // 2, -1, -1)]


@dataclass(frozen=True)
class PolyadModel:
    """The twelve constants of the vibrational model of one isotopologue [cm-1]."""

    w1: float
    w2: float
    w3: float
    x11: float
    x22: float
    x33: float
    x12: float
    x13: float
    x23: float
    g22: float
    W0: float
    W3: float

    def zeroth_order(self, v1, v2, ell, v3):
        """E0 of basis state |v1, v2^l, v3> [cm-1]."""
        return (self.w1 * v1 + self.w2 * v2 + self.w3 * v3 + self.x11 * v1 * v1 + self.x22 * v2 * v2
                + self.x33 * v3 * v3 + self.x12 * v1 * v2 + self.x13 * v1 * v3 + self.x23 * v2 * v3
                + self.g22 * ell * ell)

    def polyad(self, p, ell, v3):
        """Levels of polyad (P, l, v3): energies [cm-1] (r = 1 first, highest), eigenvectors
        (columns, in the order of :func:`polyad_basis`) and the basis."""
        basis = polyad_basis(p, ell)
        n = len(basis)
        h = np.zeros((n, n))
        for i, (v1, v2) in enumerate(basis):
            h[i, i] = self.zeroth_order(v1, v2, ell, v3)
            if i + 1 < n:  # |v1, v2> with |v1 - 1, v2 + 2>
                w = (self.W0 + self.W3 * v3) * np.sqrt(v1 * ((v2 + 2) ** 2 - ell * ell)) / 2.0
                h[i, i + 1] = h[i + 1, i] = w
        e, vec = np.linalg.eigh(h)
        order = np.argsort(-e)
        vec = vec[:, order]
        # a fixed sign: the largest component of each eigenvector positive (intensities use
        # products within one band, so only consistency matters)
        big = np.argmax(np.abs(vec), axis=0)
        vec = vec * np.sign(vec[big, np.arange(n)])
        return e[order], vec, basis

    def energy(self, code):
        """Model energy of the level ``code`` [cm-1]."""
        p, ell, v3, r = parse_code(code)
        return float(self.polyad(p, ell, v3)[0][r - 1])

    def scaled(self, rho):
        """The model of another isotopologue from the harmonic ratios rho = (rho1, rho2, rho3)."""
        r1, r2, r3 = rho
        return PolyadModel(self.w1 * r1, self.w2 * r2, self.w3 * r3, self.x11 * r1 * r1, self.x22 * r2 * r2,
                           self.x33 * r3 * r3, self.x12 * r1 * r2, self.x13 * r1 * r3, self.x23 * r2 * r3,
                           self.g22 * r2 * r2, self.W0 * np.sqrt(r1) * r2, self.W3 * np.sqrt(r1) * r2)


def fit_polyad_model(observed, start, fermi_sign=-1):
    """Least-squares fit of the model constants to observed level energies.

    Parameters
    ----------
    observed : dict
        Level code -> energy [cm-1] (the ground state, 00001, is the zero and is skipped).
    start : sequence of float
        Starting values of :data:`CONSTANTS` [cm-1].
    fermi_sign : int
        Sign kept for W0 (see ``linedata/co2_polyads.toml``).

    Returns
    -------
    (PolyadModel, dict)
        The model and the residuals (model - observed) per level [cm-1].
    """
    from scipy.optimize import least_squares

    codes = [c for c in observed if c != "00001"]
    obs = np.array([observed[c] for c in codes])
    # x33 and W3 are fixed by one level each at most; the others are overdetermined
    lo = np.full(len(CONSTANTS), -np.inf)
    hi = np.full(len(CONSTANTS), np.inf)
    iw = CONSTANTS.index("W0")
    if fermi_sign < 0:
        hi[iw] = 0.0
    else:
        lo[iw] = 0.0
    x0 = np.clip(np.asarray(start, float), lo + 1e-9, hi - 1e-9)

    def resid(x):
        m = PolyadModel(*x)
        return np.array([m.energy(c) for c in codes]) - obs

    sol = least_squares(resid, x0, bounds=(lo, hi), x_scale="jac", xtol=1e-12, ftol=1e-12)
    model = PolyadModel(*sol.x)
    return model, dict(zip(codes, resid(sol.x)))


# ------------------------------------------------------------------ levels and bands

@dataclass(frozen=True)
class Level:
    """One vibrational level: code, energy G [cm-1], rotational constants B, D, q [cm-1],
    l, and its mixing (eigenvector over the polyad basis)."""

    code: str
    g: float
    b: float
    d: float
    q: float
    ell: int
    vector: tuple
    basis: tuple

    def as_constants(self):
        """[G, B, D, q, l] as :func:`specforce.molecular.linegen.linear.band_lines` takes them."""
        return [self.g, self.b, self.d, self.q, self.ell]


@dataclass(frozen=True)
class Band:
    """One band: isotopologue, upper and lower level codes, intensity at 296 K
    [cm-1/(molecule cm-2)] and how it was obtained."""

    iso: str
    upper: str
    lower: str
    intensity: float
    basis: str


def _levels(model, iso, table, max_p, v3_max, alpha):
    """All levels of an isotopologue with P <= max_p (+1 for uppers) and v3 <= v3_max; ``alpha``
    from :func:`_b_model`."""
    obs = table["observed"].get(iso, {}) if iso == "626" else {}
    m = table["model"]
    b0 = m["B0"] if iso == "626" else rotational_b(iso, m["B0"])
    scale = b0 / m["B0"]
    out = {}
    for v3 in range(v3_max + 1):
        for p in range(max_p + 2):
            for ell in range(p % 2, p + 1, 2):
                e, vec, basis = model.polyad(p, ell, v3)
                for r in range(1, len(basis) + 1):
                    code = level_code(p, ell, v3, r)
                    c = vec[:, r - 1]
                    b_unp = np.array([b0 - scale * (alpha[0] * v1 + alpha[1] * v2 + alpha[2] * v3 - alpha[3] * ell * ell)
                                      for v1, v2 in basis])
                    b = float((c * c) @ b_unp)
                    q = float(m["q01"] * scale ** 2 * ((c * c) @ np.array([(v2 + 1) / 2 for _, v2 in basis]))) if ell == 1 else 0.0
                    g = float(e[r - 1])
                    if code in obs:
                        g = float(obs[code][0])
                        if obs[code][1]:
                            b = float(obs[code][1])
                    out[code] = Level(code, g, b, m["D0"] * scale ** 3, q, ell, tuple(c), tuple(basis))
    return out


def _b_model(table):
    """(alpha1, alpha2, alpha3, gamma_ll) from the observed B of 626: B = B0 - a1 v1 - a2 v2 - a3 v3 + g l^2,
    fitted in the mixed basis of the fitted model."""
    model = _fitted(table)[0]
    b0 = table["model"]["B0"]
    rows, rhs = [], []
    for code, (_, b) in table["observed"]["626"].items():
        if not b or code == "00001":
            continue
        p, ell, v3, r = parse_code(code)
        _, vec, basis = model.polyad(p, ell, v3)
        w = vec[:, r - 1] ** 2
        rows.append([-(w @ [v1 for v1, _ in basis]), -(w @ [v2 for _, v2 in basis]), -v3, ell * ell])
        rhs.append(b - b0)
    sol = np.linalg.lstsq(np.array(rows, float), np.array(rhs), rcond=None)[0]
    return tuple(float(x) for x in sol)


_FIT_CACHE = {}


def _fitted(table):
    key = repr(sorted(table["observed"]["626"].items())) + repr(table["model"]["start"])
    if key not in _FIT_CACHE:
        obs = {c: v[0] for c, v in table["observed"]["626"].items()}
        _FIT_CACHE[key] = fit_polyad_model(obs, table["model"]["start"], table["model"].get("fermi_sign", -1))
    return _FIT_CACHE[key]


def _amplitude_perp(lo, up):
    """Transition amplitude of q2 between a lower level and an upper level one polyad higher."""
    a = 0.0
    ell, ellp = lo.ell, up.ell
    index = {s: i for i, s in enumerate(up.basis)}
    for c, (v1, v2) in zip(lo.vector, lo.basis):
        j = index.get((v1, v2 + 1))
        if j is None:
            continue
        m = (v2 + ell + 2) / 2.0 if ellp == ell + 1 else (v2 - ell + 2) / 2.0
        a += c * up.vector[j] * np.sqrt(max(m, 0.0))
    return a


def _amplitude_par(lo, up):
    """Transition amplitude of q3 (relative to nu3) between levels of the same polyad, v3 -> v3 + 1."""
    v3 = int(lo.code[3])
    return np.sqrt(v3 + 1.0) * float(np.dot(lo.vector, up.vector))


def laser_band_intensity(entry, levels):
    """Band intensity at 296 K [cm-1/(molecule cm-2)] of a band given by one line's Einstein A.

    Parameters
    ----------
    entry : dict
        A ``[[fixed_band]]`` of the table with ``iso`` ("626"), ``upper``, ``lower``, ``einstein_a``
        [s-1] and ``line`` (branch and J'', e.g. "P20").
    levels : dict
        The isotopologue's levels (code -> :class:`Level`).

    Notes
    -----
    The line's intensity follows from its A (:func:`specforce.molecular.lineparams.
    intensity_from_einstein_a`, with g' = 2J' + 1 and the isotopologue's Q(296 K)); the band
    intensity is that divided by the line's share of the band in :func:`band_lines`'s
    rotational distribution (Boltzmann, Honl-London, every other J missing in 626), the
    same distribution the band's lines are then generated with. Only 626 is accepted: its
    nuclear-spin weight is 1, so g' = 2J' + 1 in the convention of the partition functions
    (other isotopologues would need their spin weight in g').
    """
    where = f"linedata/co2_polyads.toml: [[fixed_band]] {entry.get('upper')}-{entry.get('lower')}"
    missing = [k for k in ("iso", "upper", "lower", "einstein_a", "line") if k not in entry]
    if missing:
        raise MoleculeError(f"{where} lacks {', '.join(missing)}")
    iso, line = entry["iso"], str(entry["line"])
    if iso != "626":
        raise MoleculeError(f"{where}: an Einstein A is taken for 626 only (got {iso!r}); give an intensity instead")
    if not (isinstance(entry["einstein_a"], (int, float)) and 0 < entry["einstein_a"] < math.inf):
        raise MoleculeError(f"{where}: einstein_a must be a positive number [s-1], got {entry['einstein_a']!r}")
    if len(line) < 2 or line[0] not in "PQR" or not line[1:].isdigit():
        raise MoleculeError(f"{where}: line must be a branch and J'', such as \"P20\", got {line!r}")
    consts = {c: levels[c].as_constants() for c in (entry["upper"], entry["lower"])}
    unit = band_lines(iso, entry["upper"], entry["lower"], consts, 1.0, symmetric=iso in SYMMETRIC)
    pick = np.flatnonzero((unit["branch"] == line[0]) & (unit["j_lower"] == int(line[1:])))
    if pick.size != 1:
        raise MoleculeError(f"{where}: the band has no line {line!r}")
    k = int(pick[0])
    main = isotopologue("CO2", 1)
    s_line = intensity_from_einstein_a(float(entry["einstein_a"]), unit["wavenumber"][k], 2 * unit["j_upper"][k] + 1,
                                       unit["lower_energy"][k],
                                       float(partition_function("CO2", 1, REFERENCE_TEMPERATURE)), main.abundance)
    return float(s_line / unit["intensity"][k])


def co2_bands(table=None):
    """Every generated band with its intensity, and the levels of each isotopologue.

    Returns
    -------
    (list of Band, dict, dict)
        The bands at or above the table's ``min_band_intensity``; {iso: {code: Level}};
        and a summary (fit residuals, dropped bands and their summed intensity, isotopic ratios).
    """
    if table is None:
        table = load_co2_table()[0]
    c2, t0 = SECOND_RADIATION_CONSTANT_CM_K, REFERENCE_TEMPERATURE
    model626, resid = _fitted(table)
    m = table["model"]
    abund = {i.code: i.abundance for i in isotopologues("CO2")}
    fund = table["fundamentals"]

    def stim(nu):
        return -np.expm1(-c2 * nu / t0)

    bands, dropped, levels, ratios = [], [], {}, {}
    alpha = _b_model(table)  # the B dependence on the quanta, fitted once to 626's observed B
    for iso, max_p in table["isotopologues"].items():
        if iso == "626":
            model, dmu = model626, {"bend": 1.0, "stretch": 1.0}
        else:
            rho, dmu = isotopic_ratios(iso, model626)
            model = model626.scaled(rho)
            ratios[iso] = {"rho": rho, "dipole_squared": dmu}
        lv = _levels(model, iso, table, max_p, v3_max=1, alpha=alpha)
        levels[iso] = lv
        f_ab = abund[iso] / abund["626"]
        nu2 = lv["01101"].g
        nu3 = lv["00011"].g
        for lo in lv.values():
            p, ell, v3, _ = parse_code(lo.code)
            if lo.g > m["max_lower_energy"] or p > max_p:
                continue
            pop = np.exp(-c2 * lo.g / t0)
            for up in lv.values():
                pu, ellu, v3u, _ = parse_code(up.code)
                nu = up.g - lo.g
                if nu <= 0:
                    continue
                if pu == p + 1 and v3u == v3 and abs(ellu - ell) == 1:
                    a = _amplitude_perp(lo, up)
                    s = (fund["nu2"] * f_ab * dmu["bend"] * a * a * pop * (nu / nu2) * stim(nu) / stim(nu2))
                    how = "15 um system: harmonic q2 element in the Fermi-mixed basis"
                elif pu == p and ellu == ell and v3u == v3 + 1:
                    a = _amplitude_par(lo, up)
                    g_l = 2.0 if ell > 0 else 1.0
                    s = (fund["nu3"] * f_ab * dmu["stretch"] * a * a * g_l * pop * (nu / nu3) * stim(nu) / stim(nu3))
                    how = "4.3 um system: harmonic q3 element, overlap of the Fermi mixings"
                else:
                    continue
                if iso == "626" and (up.code, lo.code) == ("01101", "00001"):
                    how = "nu2 fundamental, from memory (medium)"
                elif iso == "626" and (up.code, lo.code) == ("00011", "00001"):
                    how = "nu3 fundamental, from memory (medium)"
                elif iso != "626":
                    how += f"; isotopic scaling (abundance x dipole-derivative ratio {dmu['bend' if v3u == v3 else 'stretch']:.4f})"
                band = Band(iso, up.code, lo.code, float(s), how)
                (bands if s >= m["min_band_intensity"] else dropped).append(band)
    for fb in table.get("fixed_band", []):
        if "einstein_a" in fb:
            s, how = laser_band_intensity(fb, levels[fb["iso"]]), fb["basis"]
        else:
            s, how = float(fb["intensity"]), fb["basis"]
        bands.append(Band(fb["iso"], fb["upper"], fb["lower"], s, how))
    summary = {
        "fit_residuals_cm1": {k: round(float(v), 4) for k, v in resid.items()},
        "constants_cm1": {k: round(float(getattr(model626, k)), 5) for k in CONSTANTS},
        "dropped_bands": len(dropped),
        "dropped_intensity": float(sum(b.intensity for b in dropped)),
        "kept_intensity": float(sum(b.intensity for b in bands)),
        "isotopic_ratios": ratios,
    }
    return bands, levels, summary


def generate_co2(table=None):
    """Generate the built-in CO2 line list.

    Parameters
    ----------
    table : dict, optional
        A CO2 table in the form of ``linedata/co2_polyads.toml`` (default that file), for
        sensitivity studies; its sha256 in the provenance is then that of its JSON form.

    Returns
    -------
    LineList
        Lines of every band of :func:`co2_bands`, in record units, with provenance (table
        sha256, the band list with each band's intensity and basis, the model's fit).
    """
    if table is None:
        table, digest = load_co2_table()
    else:
        digest = hashlib.sha256(json.dumps(table, sort_keys=True).encode()).hexdigest()
    bands, levels, summary = co2_bands(table)
    isos = {i.code: i for i in isotopologues("CO2")}
    br = table["broadening"]
    cols = new_columns()
    listed = []
    for band in bands:
        lv = levels[band.iso]
        consts = {band.upper: lv[band.upper].as_constants(), band.lower: lv[band.lower].as_constants()}
        lines = band_lines(band.iso, band.upper, band.lower, consts, band.intensity, symmetric=band.iso in SYMMETRIC)
        n = lines["wavenumber"].size
        m_abs = np.abs(np.where(lines["branch"] == "P", -lines["j_lower"],
                                np.where(lines["branch"] == "R", lines["j_lower"] + 1, lines["j_lower"])))
        gamma_air = br["gamma_air_inf"] + br["gamma_air_amp"] * np.exp(-m_abs / br["gamma_air_scale"])
        append_line_parameters(cols, molecule_id("CO2"), isos[band.iso].local_id, lines["wavenumber"],
                               lines["intensity"], lines["lower_energy"], gamma_air, br)
        line_quanta(cols, band.upper, band.lower, lines)
        append_blank_text(cols, n)
        cols["g_upper"].append(2 * lines["j_upper"] + 1.0)
        cols["g_lower"].append(2 * lines["j_lower"] + 1.0)
        listed.append({"iso": band.iso, "upper": band.upper, "lower": band.lower, "lines": int(n),
                       "centre_cm1": round(lv[band.upper].g - lv[band.lower].g, 4),
                       "intensity_296K": band.intensity, "basis": band.basis})
    out = finish_columns(cols)
    return LineList(out, {"generator": {"molecule": "CO2", "table": "linedata/co2_polyads.toml", "table_sha256": digest,
                                        "model": "Fermi polyads fitted to observed 626 levels; harmonic transition "
                                                 "moments; isotopic scaling", "bands": listed, **summary}})
