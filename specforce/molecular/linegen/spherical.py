"""Lines of a spherical-top molecule (CH4) from band origins, rotational and Coriolis constants.

Levels and positions
--------------------
Ground state: E''(J) = B0 J(J+1) - D0 [J(J+1)]^2. A triply degenerate (F2)
fundamental with vibrational angular momentum l = 1 couples l to the rotation
R; with Delta R = 0 the upper level of a line from J'' has R = J'' and
J' = J'' + 1, J'', J'' - 1 (R, Q, P branches), at

    E'(J', R) = nu0 + B' J'(J'+1) - D' [J'(J'+1)]^2 - 2 B' zeta <l.J>,
    <l.J> = [J'(J'+1) + l(l+1) - R(R+1)] / 2

(first-order Coriolis; Herzberg 1945, Molecular Spectra II, Ch. II.4 and IV.4),
which gives the familiar pattern nu = nu0 - 2 B zeta + 2 B (1 - zeta) m with
m = J''+1, 0, -J'' when B' = B''. For the doubly degenerate (E) nu2, which is
infrared-inactive and borrows intensity from nu4, zeta = 0 is used.

Intensities
-----------
A line from J'' gets the fraction (2J' + 1) / [3 (2J'' + 1)] of that level's
transition strength (recoupling of l = 1 with R = J''; the fractions of the three
branches add to one), times the level's weight g(J'') = (2J'' + 1) W(J''), its
Boltzmann factor and nu (1 - exp(-c2 nu / T)) at 296 K, normalised so that the
band adds up to its tabulated 296 K intensity. W(J) sums the nuclear-spin
weights of the tetrahedral species in the rotational level: 5 for A1 and A2, 2
for E, 3 for F1 and F2 (Herzberg 1945, Ch. I.4; Wilson 1935, J. Chem. Phys. 3,
276), the species counts coming from the characters of D^J on the classes of
T_d (equivalent rotations 0, 2 pi/3, pi, pi/2 and pi).

Tetrahedral fine structure
--------------------------
Each J line is split into one sub-line per tetrahedral level of its lower J,
weighted by that level's spin weight. The pattern is that of the lowest-order
tetrahedral operator, Omega_4 = Jx^4 + Jy^4 + Jz^4 - (3/5) [J(J+1)]^2 (the
rank-4 cubic invariant of the angular momentum, the form of the tetrahedral
centrifugal distortion term; Hecht 1960, J. Mol. Spectrosc. 5, 355, from
memory): its eigenvalues in the 2J+1 rotational functions of J give the level
positions, and the species of each eigenspace (so its spin weight) follows from
the characters of the equivalent rotations on it (:func:`tetrahedral_splitting`).
Levels closer than 1e-6 of the manifold's span are merged with their weights
(the near-degenerate clusters of high J). The scale is ``1.5 c`` with
c = ``tetrahedral_width`` of ``linedata/ch4_constants.toml`` (our own estimate,
not a fitted constant): the eigenvalues span about (2/3) J^4, so the manifold
spans about c J^4. ``pattern = "even"`` in the table keeps the earlier schematic
(the levels spread evenly over c J^4). Without any split, the whole J manifold
would sit at one position: each line would be more saturated at its centre and
the band would absorb less, most of all in the strong, low-J part, so CH4
forcing would be biased. The closing notes and README give the size of these
effects measured on forcing. The true splitting of the nu4 lines also has
upper-state tetrahedral and Coriolis terms of other forms, whose constants we
could not reach.

Hot bands
---------
The hot bands out of the nu4 and nu2 levels that fall on the 7.7 um band,
2nu4 <- nu4 (upper components A1, E, F2) and nu2 + nu4 <- nu2 (F1, F2), take
their intensity from the harmonic transition-moment model, not from memory:
:func:`hot_band_intensity` scales the nu4 fundamental by the squared moment of
the hot transition relative to it, the lower level's population (degeneracy
times Boltzmann factor at 296 K) and the nu (1 - exp(-c2 nu / T)) factor. For a
triply degenerate harmonic oscillator the step v = 1 -> 2 carries (v + 3) / 3 =
4/3 of the fundamental's squared moment per lower component, shared 1/6 : 5/6
between l = 0 (A1) and l = 2 (E + F2, by degeneracy 2 : 3), so 2/9, 4/9 and 2/3;
adding a nu4 quantum beside a nu2 quantum carries 1, shared by degeneracy
between F1 and F2 (common textbook results for the isotropic oscillator,
derived here). Their rotational structure is schematic: the nu4 pattern (its
B, D and zeta) about the hot band's origin, with lower-state energies of the
lower vibrational level plus the ground-state rotational energy.

13CH4
-----
The nu4 band of 13CH4 (1.1 % of the molecules) is the 12CH4 band moved to its
own origin (from memory), with the same rotational constants (the carbon atom
sits at the centre of mass, so B barely changes) and the intensity of the 12CH4
band times the abundance ratio and the radiation-term ratio
(:func:`isotopic_band_intensity`); the isotopic change of the dipole
derivative, of order the 0.6 % shift of the band, is left out. Its levels carry
the 13C nuclear-spin factor 2 in g''.

Missing pieces, named: the scale of the tetrahedral splitting and its terms
beyond the lowest-order operator (upper-state constants), the interaction of nu2 and nu4 in the dyad, the
rotational structure proper to each hot band (its Coriolis sublevels), the
pentad's interactions (nu3, nu2 + nu4 and 2nu4 are generated as separate bands
with intensities from memory: the combination bands are forbidden in the
harmonic model), the other bands of 13CH4 and CH3D, and the Herman-Wallis-type
J dependence of the band strength.
"""

from __future__ import annotations

import functools
import hashlib
import math
import tomllib
from importlib import resources

import numpy as np

from ...constants import REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K
from ..lines import LineList
from . import append_blank_text, append_line_parameters, finish_columns, new_columns
from ..molecules import isotopologue, molecule_id

__all__ = ["load_ch4_table", "tetrahedral_species", "spin_rotation_weight", "tetrahedral_splitting", "band_lines",
           "hot_band_intensity", "isotopic_band_intensity", "generate_ch4"]

# T_d character table, classes E, 8C3, 3C2, 6S4, 6sigma_d (class sizes 1, 8, 3, 6, 6)
_CLASS_SIZES = np.array([1, 8, 3, 6, 6])
_CHARACTERS = {"A1": [1, 1, 1, 1, 1], "A2": [1, 1, 1, -1, -1], "E": [2, -1, 2, 0, 0],
               "F1": [3, 0, -1, 1, -1], "F2": [3, 0, -1, -1, 1]}
# rotation angle equivalent to each class in the molecular symmetry group T_d(M)
_ANGLES = np.array([0.0, 2.0 * math.pi / 3.0, math.pi, math.pi / 2.0, math.pi])
#: Nuclear-spin weight of a CH4 level of each species.
SPIN_WEIGHTS = {"A1": 5, "A2": 5, "E": 2, "F1": 3, "F2": 3}


def load_ch4_table():
    """The constants table ``linedata/ch4_constants.toml`` and its sha256."""
    raw = resources.files("specforce.linedata").joinpath("ch4_constants.toml").read_bytes()
    return tomllib.loads(raw.decode()), hashlib.sha256(raw).hexdigest()


def tetrahedral_species(j):
    """How often each T_d species occurs among the 2J+1 rotational functions of level J.

    Notes
    -----
    The character of D^J for a rotation by alpha is sin((J + 1/2) alpha) / sin(alpha / 2)
    (2J + 1 at alpha = 0); the counts follow from the orthogonality of characters.

    Examples
    --------
    >>> tetrahedral_species(2)
    {'A1': 0, 'A2': 0, 'E': 1, 'F1': 0, 'F2': 1}
    """
    chi = np.empty(5)
    for i, a in enumerate(_ANGLES):
        chi[i] = 2 * j + 1 if a == 0.0 else math.sin((j + 0.5) * a) / math.sin(0.5 * a)
    out = {}
    for name, row in _CHARACTERS.items():
        n = float(np.sum(_CLASS_SIZES * np.array(row) * chi)) / 24.0
        out[name] = int(round(n))
    return out


def spin_rotation_weight(j):
    """W(J): the sum of nuclear-spin weights over the tetrahedral levels of J (per M)."""
    return sum(SPIN_WEIGHTS[s] * n for s, n in tetrahedral_species(j).items())


def _components(j):
    """Spin weights of the tetrahedral components of level J, one entry per component."""
    out = []
    for s, n in tetrahedral_species(j).items():
        out.extend([SPIN_WEIGHTS[s]] * n)
    return out


def _angular_momentum(j):
    """Jx, Jy, Jz in the basis |J, m>, m = J .. -J (units of hbar)."""
    m = np.arange(j, -j - 1, -1, dtype=float)
    raise_ = np.zeros((m.size, m.size))
    for i in range(1, m.size):
        raise_[i - 1, i] = math.sqrt(j * (j + 1) - m[i] * (m[i] + 1))
    return (raise_ + raise_.T) / 2.0, (raise_ - raise_.T) / 2.0j, np.diag(m).astype(complex)


# one equivalent rotation of each class of T_d(M) (E, 8C3, 3C2, 6S4, 6sigma_d): axis and angle
_CLASS_ROTATIONS = (((0.0, 0.0, 1.0), 0.0), ((1.0, 1.0, 1.0), 2.0 * math.pi / 3.0), ((0.0, 0.0, 1.0), math.pi),
                    ((0.0, 0.0, 1.0), math.pi / 2.0), ((1.0, -1.0, 0.0), math.pi))


@functools.lru_cache(maxsize=128)
def tetrahedral_splitting(j):
    """Levels of rotational level J under the tetrahedral operator Omega_4 (see the module docstring).

    Parameters
    ----------
    j : int
        Rotational quantum number.

    Returns
    -------
    positions : numpy.ndarray
        Eigenvalues of Omega_4 = Jx^4 + Jy^4 + Jz^4 - (3/5) [J(J+1)]^2 [hbar^4],
        one per level (near-degenerate levels merged), increasing.
    weights : numpy.ndarray
        Spin weight of each (merged) level: the sum of SPIN_WEIGHTS over its species.
    species : list of dict
        The T_d species in each (merged) level and how often.
    """
    jx, jy, jz = _angular_momentum(j)
    x = j * (j + 1)
    op = (np.linalg.matrix_power(jx, 4) + np.linalg.matrix_power(jy, 4) + np.linalg.matrix_power(jz, 4)).real
    values, vectors = np.linalg.eigh(op - 0.6 * x * x * np.eye(2 * j + 1))
    span = max(values[-1] - values[0], 1.0)  # J = 0, 1: no splitting (Omega_4 is a multiple of 1 there)
    groups = np.split(np.arange(values.size), np.flatnonzero(np.diff(values) > 1e-6 * span) + 1)
    rotations = []
    for axis, angle in _CLASS_ROTATIONS:
        n = np.asarray(axis) / np.linalg.norm(axis)
        w, u = np.linalg.eigh(n[0] * jx + n[1] * jy + n[2] * jz)
        rotations.append((u * np.exp(-1j * angle * w)) @ u.conj().T)
    positions, weights, species = [], [], []
    for g in groups:
        v = vectors[:, g]
        chi = np.array([np.trace(v.conj().T @ r @ v).real for r in rotations])
        counts = {}
        for name, row in _CHARACTERS.items():
            n = float(np.sum(_CLASS_SIZES * np.array(row) * chi)) / 24.0
            if round(n) > 0:
                counts[name] = int(round(n))
        positions.append(float(values[g].mean()))
        weights.append(sum(SPIN_WEIGHTS[s] * c for s, c in counts.items()))
        species.append(counts)
    return np.array(positions), np.array(weights, dtype=float), species


def band_lines(band, ground, j_max, fine_structure, temperature=REFERENCE_TEMPERATURE):
    """Lines of one band (positions, relative and absolute intensities, lower levels).

    Parameters
    ----------
    band : dict
        ``origin``, ``B``, ``D``, ``zeta`` [cm-1 / dimensionless] and ``intensity``
        [cm-1/(molecule cm-2) at 296 K]; optional ``lower_origin`` [cm-1], the
        vibrational term value of the lower level (0: the ground state).
    ground : dict
        Ground-state ``B`` and ``D`` [cm-1].
    j_max : int
        Highest lower-state J.
    fine_structure : dict
        ``split`` (bool), ``tetrahedral_width`` [cm-1] and ``pattern``
        ("operator", the default, or "even").

    Returns
    -------
    dict of numpy.ndarray
        ``wavenumber``, ``intensity``, ``lower_energy``, ``j_lower``, ``j_upper``,
        ``g_lower``, ``branch``.
    """
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    rows = []
    e_vib = float(band.get("lower_origin", 0.0))
    for jl in range(j_max + 1):
        e_low = e_vib + ground["B"] * jl * (jl + 1) - ground["D"] * (jl * (jl + 1)) ** 2
        g_low = (2 * jl + 1) * spin_rotation_weight(jl)
        for ju, branch in ((jl + 1, "R"), (jl, "Q"), (jl - 1, "P")):
            if ju < 0 or (jl == 0 and ju == 0):
                continue
            x = ju * (ju + 1)
            l_dot_j = 0.5 * (x + 2 - jl * (jl + 1))
            e_up = band["origin"] + band["B"] * x - band["D"] * x**2 - 2.0 * band["B"] * band["zeta"] * l_dot_j
            nu = e_up - (e_low - e_vib)
            frac = (2 * ju + 1) / (3.0 * (2 * jl + 1))
            w = frac * g_low * math.exp(-c2 * e_low / temperature) * nu * -math.expm1(-c2 * nu / temperature)
            rows.append((nu, w, e_low, jl, ju, g_low, branch))
    nu, w, e_low, jl, ju, g_low, branch = (np.array(col) for col in zip(*rows))
    s = band["intensity"] * w / w.sum()
    if fine_structure.get("split", True):
        out = {k: [] for k in ("wavenumber", "intensity", "lower_energy", "j_lower", "j_upper", "g_lower", "branch")}
        for i in range(nu.size):
            if fine_structure.get("pattern", "operator") == "even":
                comps = np.array(_components(int(jl[i])), dtype=float)
                n = comps.size
                width = fine_structure["tetrahedral_width"] * jl[i] ** 4
                offsets = (np.arange(n) - 0.5 * (n - 1)) * (width / n if n > 1 else 0.0)
            else:
                levels, comps, _ = tetrahedral_splitting(int(jl[i]))
                n = comps.size
                offsets = 1.5 * fine_structure["tetrahedral_width"] * levels
            out["wavenumber"].append(nu[i] + offsets)
            out["intensity"].append(s[i] * comps / comps.sum())
            for key, val in (("lower_energy", e_low[i]), ("j_lower", jl[i]), ("j_upper", ju[i]),
                             ("g_lower", g_low[i]), ("branch", branch[i])):
                out[key].append(np.full(n, val))
        return {k: np.concatenate(v) for k, v in out.items()}
    return {"wavenumber": nu, "intensity": s, "lower_energy": e_low, "j_lower": jl, "j_upper": ju,
            "g_lower": g_low, "branch": branch}


def hot_band_intensity(fundamental, moment_ratio, origin, lower_origin, lower_degeneracy,
                       temperature=REFERENCE_TEMPERATURE):
    """Intensity of a hot band from its fundamental, in the harmonic transition-moment model.

    Parameters
    ----------
    fundamental : dict
        The fundamental from the ground state: ``origin`` [cm-1] and ``intensity``
        [cm-1/(molecule cm-2) at ``temperature``].
    moment_ratio : float
        Squared transition moment of the hot band, summed over its upper
        components and averaged over the lower ones, over that of the fundamental
        [dimensionless] (see the module docstring).
    origin : float
        Band origin of the hot band [cm-1].
    lower_origin : float
        Vibrational term value of its lower level [cm-1].
    lower_degeneracy : int
        Vibrational degeneracy of the lower level.
    temperature : float
        Temperature of the intensities [K].

    Returns
    -------
    float
        Band intensity [cm-1/(molecule cm-2)] at ``temperature``.

    Notes
    -----
    S = S_f R g exp(-c2 E_low / T) [nu (1 - exp(-c2 nu / T))] / [nu_f (1 - exp(-c2 nu_f / T))]:
    the band intensity is proportional to the lower level's population, the
    squared moment and the radiation term (common practice; e.g. Herzberg 1945,
    Molecular Spectra II, Ch. IV; the shared partition function cancels).
    """
    c2t = SECOND_RADIATION_CONSTANT_CM_K / temperature
    nu_f = float(fundamental["origin"])
    radiation = (origin * -math.expm1(-c2t * origin)) / (nu_f * -math.expm1(-c2t * nu_f))
    return float(fundamental["intensity"]) * moment_ratio * lower_degeneracy * math.exp(-c2t * lower_origin) * radiation


def isotopic_band_intensity(fundamental, origin, abundance_ratio, temperature=REFERENCE_TEMPERATURE):
    """Intensity of a fundamental of a minor isotopologue from that of the main one.

    Parameters
    ----------
    fundamental : dict
        The main isotopologue's band: ``origin`` [cm-1] and ``intensity``
        [cm-1/(molecule cm-2) at ``temperature``, abundance-weighted].
    origin : float
        Band origin of the minor isotopologue [cm-1].
    abundance_ratio : float
        Natural abundance of the minor isotopologue over that of the main one.
    temperature : float
        Temperature of the intensities [K].

    Returns
    -------
    float
        Band intensity [cm-1/(molecule cm-2)], abundance-weighted (the
        line-record convention), with the same squared transition moment.
    """
    return hot_band_intensity(fundamental, abundance_ratio, origin, 0.0, 1, temperature)


def _isotopic_bands(table):
    """The minor-isotopologue bands of the table as band dicts for :func:`band_lines` (name -> band)."""
    out = {}
    main = isotopologue("CH4", int(table["isotopologue"]["local_id"]))
    for name, entry in table.get("isotopic_band", {}).items():
        parent = table["band"][entry["of"]]
        iso = isotopologue("CH4", int(entry["local_id"]))
        origin = float(entry["origin"])
        out[name] = {**parent, "origin": origin, "isotopologue": iso.local_id,
                     "intensity": isotopic_band_intensity(parent, origin, iso.abundance / main.abundance),
                     "extra_spin_weight": float(entry.get("extra_spin_weight", 1.0)),
                     "intensity_from": f"{entry['of']} of the main isotopologue times the abundance ratio"}
    return out


def _hot_bands(table):
    """The hot bands of the table as band dicts for :func:`band_lines` (name -> band)."""
    out = {}
    for name, hot in table.get("hot_band", {}).items():
        lower = table["band"][hot["lower"]]
        parent = table["band"][hot["pattern"]]  # the fundamental whose moment and pattern it takes
        origin = round(float(hot["upper_origin"]) - float(lower["origin"]), 6)
        intensity = hot_band_intensity(parent, float(hot["moment_ratio"]), origin, float(lower["origin"]),
                                       _CHARACTERS[lower["degeneracy"]][0])  # dimension of its species
        out[name] = {"origin": origin, "lower_origin": float(lower["origin"]), "B": parent["B"], "D": parent["D"],
                     "zeta": parent["zeta"], "intensity": intensity, "degeneracy": hot["degeneracy"],
                     "lower": f"{hot['lower']} {lower['degeneracy']}",
                     "intensity_from": f"harmonic transition-moment model from {hot['pattern']}"}
    return out


def generate_ch4(table=None):
    """Generate the built-in CH4 line list: nu4, nu2, their hot bands and the pentad bands
    nu3, nu2 + nu4 and 2nu4 of 12CH4, and nu4 of 13CH4.

    Parameters
    ----------
    table : dict, optional
        Constants (default ``linedata/ch4_constants.toml``).

    Returns
    -------
    LineList
        Lines in record units, sorted by wavenumber, with provenance.
    """
    digest = None
    if table is None:
        table, digest = load_ch4_table()
    iso = isotopologue("CH4", int(table["isotopologue"]["local_id"]))
    jmax = int(table["generation"]["j_max"])
    br = table["broadening"]
    cols = new_columns()
    bands = []
    for name, band in {**table["band"], **_hot_bands(table), **_isotopic_bands(table)}.items():
        lines = band_lines(band, table["ground"], jmax, table["fine_structure"])
        n = lines["wavenumber"].size
        gamma_air = np.maximum(br["gamma_air_floor"],
                               br["gamma_air_amplitude"] - br["gamma_air_slope"] * lines["j_lower"])
        append_line_parameters(cols, molecule_id("CH4"), int(band.get("isotopologue", iso.local_id)),
                               lines["wavenumber"], lines["intensity"], lines["lower_energy"], gamma_air, br)
        cols["global_upper"].append(np.full(n, f"{name} {band['degeneracy']}".rjust(15).encode()))
        cols["global_lower"].append(np.full(n, band.get("lower", "GROUND").rjust(15).encode()))
        cols["local_upper"].append(np.array([f"{j:3d}".ljust(15).encode() for j in lines["j_upper"]], dtype="S15"))
        cols["local_lower"].append(np.array([f"{b}{j:3d}".rjust(15).encode() for b, j in
                                             zip(lines["branch"], lines["j_lower"])], dtype="S15"))
        append_blank_text(cols, n)
        cols["g_upper"].append((2 * lines["j_upper"] + 1).astype(float))
        cols["g_lower"].append(lines["g_lower"].astype(float) * band.get("extra_spin_weight", 1.0))
        bands.append({"band": name, "origin": band["origin"], "lines": int(n), "intensity_296K": band["intensity"],
                      "intensity_from": band.get("intensity_from", "the table (from memory)")})
    out = finish_columns(cols)
    return LineList(out, {"generator": {"molecule": "CH4", "table": "linedata/ch4_constants.toml",
                                        "table_sha256": digest, "j_max": jmax, "bands": bands,
                                        "tetrahedral_split": bool(table["fine_structure"].get("split", True))}})
