"""Lines of asymmetric-top molecules (H2O, O3) from rotational constants and dipole moments.

Levels and line strengths
-------------------------
The rotational levels of each vibrational state (Watson's A-reduced Hamiltonian) and the
line strengths R of its transitions come from :mod:`specforce.molecular.linegen.asymmetric_rotor`.

Intensities
-----------
The line intensity, from the line strength R [D^2],
in the units of the 160-character record (Simeckova et al. 2006, JQSRT 98, 130,
Eq. 20)::

    S = 4.16237e-19 I_a nu g_ns exp(-c2 E''/T) (1 - exp(-c2 nu/T)) R[D^2] / Q(T),

where 4.16237e-19 = 8 pi^3 / (3 h c) x 1e-36 in cgs, I_a the abundance and
g_ns the nuclear-spin weight: for H2O, 1 for levels with Ka + Kc even (para)
and 3 for Ka + Kc odd (ortho) in the 000 and 010 states (Herzberg 1945,
Molecular Spectra II, Ch. I.4). Q(T) is :func:`specforce.molecular.molecules.partition_function`.

Rotational dependence of the nu2 transition moment
--------------------------------------------------
The permanent dipole mu_0 borrows intensity into the fundamental through the
dependence of the rotational Hamiltonian on the bending coordinate, W = sum_alpha
B_alpha b_alpha J_alpha^2 with b_alpha = d ln B_alpha / dq2. To first order in
W / omega the vibrational states mix with the rotational states, and the line
amplitude becomes (tau = mu' / sqrt 2 the transition moment, omega the band origin)::

    tau <v'|Phi_b|v> + (mu_0 / (sqrt 2 omega)) (<W v'|Phi_b|v> - <v'|Phi_b|W v>),

which for a diatomic molecule is the Herman-Wallis factor 1 + 2 (mu_0/mu') b1 (B/omega) m
(Herman and Wallis 1955, J. Chem. Phys. 23, 637; from memory). b_alpha comes from the
equilibrium structure (:func:`~specforce.molecular.linegen.asymmetric_rotor.bending_derivatives`); the sign of mu' against mu_0 from
the bond-dipole model (``linedata/h2o_constants.toml``).

Centrifugal distortion of the dipole in the pure rotation
---------------------------------------------------------
The same coupling mixes 010 into the ground state, |0 r> -> |0 r> - |1> W |r> / (sqrt 2
omega), and the transition moment tau then enters the pure rotation::

    mu_0 <r'|Phi_b|r> - (tau / (sqrt 2 omega)) (<W r'|Phi_b|r> + <r'|Phi_b|W r>),

the centrifugal distortion dipole of the bend (second-order perturbation theory; the
terms a contact transformation adds to the effective dipole, as in Watson's treatment
of the rotational Hamiltonian). It matters for the weak high-J lines with Delta Ka = 3,
5 that set the absorption in the 700-1200 cm-1 window. The stretches add terms of the
same kind with their transition moments and a^{alpha beta}; they are left out (each
transition moment is at most 0.07 D against the bend's 0.12 D, at 2.3 times the
wavenumber, and their signs relative to the geometry are not known to us).

Isotopologues
-------------
H2(18O), H2(17O) and HDO come from the same table by isotopic substitution
(:mod:`specforce.molecular.linegen.water_isotopes`); HDO's bands are hybrids of a- and b-type
lines, and its levels use the harmonic quartic distortion of
:mod:`specforce.molecular.linegen.normal_modes` in place of fitted Watson constants.

Missing pieces, named: the stretches' share of the centrifugal distortion dipole;
hot bands (020-010) and the pure rotation within 010 (each below 0.1 % of the
intensity in its region at 296 K); HDO's stretching bands (nu1 near 2724 cm-1) and
D2O; the Watson expansion's failure at high Ka, where water's levels are poorly
represented by a power series (positions there can be off by several cm-1).
"""

from __future__ import annotations

import hashlib
import math
import tomllib
from importlib import resources

import numpy as np

from ...constants import PLANCK, REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K, SPEED_OF_LIGHT
from ..lines import LineList
from . import append_blank_text, append_line_parameters, finish_columns, new_columns
from ..molecules import isotopologue, molecule_id, partition_function
from .asymmetric_rotor import bending_derivatives, line_strengths, rotation_vibration_operator, rotational_levels
from .water_isotopes import isotopic_water_constants

__all__ = ["load_h2o_table", "load_o3_table", "generate_h2o", "generate_o3", "INTENSITY_CONSTANT"]

# h [erg s] and c [cm s-1] in cgs, from the SI values of specforce.constants
_H_CGS = PLANCK * 1e7
_C_CGS = SPEED_OF_LIGHT * 100.0
#: 8 pi^3 / (3 h c) x 1e-36 [cm-1/(molecule cm-2) per (cm-1 D^2)], h and c exact (CODATA 2018), cgs.
INTENSITY_CONSTANT = 8.0 * math.pi**3 / (3.0 * _H_CGS * _C_CGS) * 1e-36


def _load_table(name):
    raw = resources.files("specforce.linedata").joinpath(name).read_bytes()
    return tomllib.loads(raw.decode()), hashlib.sha256(raw).hexdigest()


def load_h2o_table():
    """The constants table ``linedata/h2o_constants.toml`` and its sha256."""
    return _load_table("h2o_constants.toml")


def load_o3_table():
    """The constants table ``linedata/o3_constants.toml`` and its sha256."""
    return _load_table("o3_constants.toml")


def _spin_weight(ka, kc, weights=(1, 3)):
    """Nuclear-spin weight of water levels in 000 and 010: ``weights[1]`` for Ka + Kc odd (ortho
    for H2(16O): 3), else ``weights[0]`` (para: 1) (Herzberg 1945, Ch. I.4)."""
    return np.where((ka + kc) % 2 == 1, weights[1], weights[0])


def _intensity(nu, e_low, g_low, r, abundance, q296, t=REFERENCE_TEMPERATURE):
    c2 = SECOND_RADIATION_CONSTANT_CM_K
    return (INTENSITY_CONSTANT * abundance * nu * g_low * np.exp(-c2 * e_low / t) * -np.expm1(-c2 * nu / t) * r
            / q296)


def _generation_setup(molecule, table, loader):
    """The table (loaded when None) and its sha256 (None for a given table), the isotopologue,
    Q(296 K), j_max and the intensity threshold of one generator run."""
    digest = None
    if table is None:
        table, digest = loader()
    iso = isotopologue(molecule, int(table["isotopologue"]["local_id"]))
    q296 = float(partition_function(molecule, iso.local_id, REFERENCE_TEMPERATURE))
    return table, digest, iso, q296, int(table["generation"]["j_max"]), float(table["generation"]["min_intensity"])


def _append_labels(cols, vu, vl, up, lo, iu, il, g_up, g_low):
    """Append the quantum labels (v1 v2 v3; J Ka Kc) and the statistical weights of one band."""
    n = iu.size
    cols["global_upper"].append(np.full(n, f"{vu[0]:>11} {vu[1]} {vu[2]}".rjust(15).encode()))
    cols["global_lower"].append(np.full(n, f"{vl[0]:>11} {vl[1]} {vl[2]}".rjust(15).encode()))
    cols["local_upper"].append(np.array([f"{a:3d}{b:3d}{c:3d}".ljust(15).encode() for a, b, c in
                                         zip(up["j"][iu], up["ka"][iu], up["kc"][iu])], dtype="S15"))
    cols["local_lower"].append(np.array([f"{a:3d}{b:3d}{c:3d}".ljust(15).encode() for a, b, c in
                                         zip(lo["j"][il], lo["ka"][il], lo["kc"][il])], dtype="S15"))
    append_blank_text(cols, n)
    cols["g_upper"].append(np.asarray(g_up, dtype=float))
    cols["g_lower"].append(np.asarray(g_low, dtype=float))


def _bend_corrections(table):
    """The ``correction`` arguments of :func:`line_strengths` that come from the bend's
    vibration-rotation coupling: (for the nu2 band, for the pure rotation), each None
    where the table leaves it out ([herman_wallis] absent; ``pure_rotation = false``)."""
    hw, st = table.get("herman_wallis"), table["structure"]
    if not hw:
        return None, None
    oxygen = st.get("atoms", ("1H", "1H", "16O"))[2]
    deriv = bending_derivatives(st["bond_length"], st["angle"], min(st["harmonic"]), oxygen)
    mu0, omega = table["dipole"]["pure_rotation"], table["state"]["010"]["origin"]
    tau = hw["sign"] * table["dipole"]["nu2_transition"]
    kappa = mu0 / (math.sqrt(2.0) * tau * omega)
    k_rot = -tau / (math.sqrt(2.0) * omega * mu0)
    ground = table["state"]["000"]
    cache = {}

    def w(j):
        if j not in cache:
            cache[j] = rotation_vibration_operator(ground, deriv, j)
        return cache[j]

    rotation = (k_rot, k_rot, w) if hw.get("pure_rotation", True) else None
    return (kappa, -kappa, w), rotation


def generate_h2o(table=None):
    """Generate the built-in H2O line list: pure rotation, nu2 and the hot bands 010-010 (pure
    rotation within the bending state) and 020-010 (where the table has a 020 state) of
    H2(16)O, and of the isotopologues in the table's [substitution] section by isotopic substitution
    (:func:`specforce.molecular.linegen.water_isotopes.isotopic_water_constants`).

    Parameters
    ----------
    table : dict, optional
        Constants (default ``linedata/h2o_constants.toml``).

    Returns
    -------
    LineList
        Lines in record units, sorted by wavenumber, with provenance.
    """
    table, digest, iso, q296, jmax, smin = _generation_setup("H2O", table, load_h2o_table)
    cols = new_columns()
    bands = _append_water_lines(cols, table, iso, q296, (1, 3), jmax, smin)
    for code, sub in table.get("substitution", {}).items():
        sub_iso = isotopologue("H2O", int(sub["local_id"]))
        if sub_iso.code != code:
            raise ValueError(f"h2o_constants.toml: [substitution.{code}] names isotopologue {sub_iso.code}")
        sub_q = float(partition_function("H2O", sub_iso.local_id, REFERENCE_TEMPERATURE))
        bands += _append_water_lines(cols, isotopic_water_constants(table, tuple(sub["atoms"])), sub_iso, sub_q,
                                     tuple(sub["spin_weights"]), jmax, smin)
    out = finish_columns(cols)
    return LineList(out, {"generator": {"molecule": "H2O", "table": "linedata/h2o_constants.toml",
                                        "table_sha256": digest, "j_max": jmax, "bands": bands}})


def _append_water_lines(cols, table, iso, q296, spin_weights, jmax, smin):
    """Append the pure rotation and nu2 lines of one water isotopologue; return its band list.
    ``spin_weights``: nuclear-spin weights of levels with Ka + Kc even and odd, in the
    line-record convention (H2(16O) 1 and 3; H2(17O) 6 and 18; HDO 6 and 6)."""
    tau = table.get("distortion")
    ground = rotational_levels(table["state"]["000"], jmax, tau)
    bend = rotational_levels(table["state"]["010"], jmax, tau)
    nu2_correction, rotation_correction = _bend_corrections(table)
    dip = table["dipole"]
    components = dict(dip.get("components") or {"pure_rotation": {dip["axis"]: dip["pure_rotation"]},
                                                "nu2_transition": {dip["axis"]: dip["nu2_transition"]}})

    def strengths(upper, lower, kind, correction):
        # a- and b-type lines obey different selection rules, so a hybrid band is their union
        found = [line_strengths(upper, lower, moment, axis, correction) for axis, moment in components[kind].items()]
        return tuple(np.concatenate(x) for x in zip(*found))

    parts = []
    # pure rotation within 000: orient each pair so that the lower level is the lower in energy
    iu, il, r = strengths(ground, ground, "pure_rotation", rotation_correction)
    keep = ground["energy"][iu] > ground["energy"][il]
    parts.append(("000", "000", ground, ground, iu[keep], il[keep], r[keep]))
    parts.append(("010", "000", bend, ground, *strengths(bend, ground, "nu2_transition", nu2_correction)))
    # the pure rotation within 010 (a hot band: its lower levels lie 1595 cm-1 up), with the permanent
    # dipole and distortion dipole of 000 (their change with the bend is left out)
    iu, il, r = strengths(bend, bend, "pure_rotation", rotation_correction)
    keep = bend["energy"][iu] > bend["energy"][il]
    parts.append(("010", "010", bend, bend, iu[keep], il[keep], r[keep]))
    if "020" in table["state"]:
        # the hot band 020-010: the harmonic step v2 = 1 -> 2 has sqrt(2) times nu2's transition moment,
        # with nu2's rotational correction
        components["nu2_hot"] = {axis: math.sqrt(2.0) * m for axis, m in components["nu2_transition"].items()}
        bend2 = rotational_levels(table["state"]["020"], jmax, tau)
        parts.append(("020", "010", bend2, bend, *strengths(bend2, bend, "nu2_hot", nu2_correction)))

    br = table["broadening"]
    bands = []
    for vu, vl, up, lo, iu, il, r in parts:
        nu = up["energy"][iu] - lo["energy"][il]
        g_low = _spin_weight(lo["ka"][il], lo["kc"][il], spin_weights)
        s = _intensity(nu, lo["energy"][il], g_low, r, iso.abundance, q296)
        ok = (s >= smin) & (nu > 0)
        iu, il, nu, s, r, g_low = iu[ok], il[ok], nu[ok], s[ok], r[ok], g_low[ok]
        n = nu.size
        j_low = lo["j"][il]
        g_up = _spin_weight(up["ka"][iu], up["kc"][iu], spin_weights) * (2 * up["j"][iu] + 1)
        # Einstein A from R: A = 64 pi^4 nu^3 R / (3 h (2J'+1)) with R in esu^2 cm^2 (Simeckova 2006, Eq. 18)
        a_coef = 64.0 * math.pi**4 * nu**3 * r * 1e-36 / (3.0 * _H_CGS * (2 * up["j"][iu] + 1))
        gamma_air = np.maximum(br["gamma_air_floor"], br["gamma_air_amplitude"] * np.exp(-j_low / br["gamma_air_scale"]))
        append_line_parameters(cols, molecule_id("H2O"), iso.local_id, nu, s, lo["energy"][il], gamma_air, br,
                               einstein_a=a_coef)
        _append_labels(cols, vu, vl, up, lo, iu, il, g_up, g_low * (2 * j_low + 1))
        bands.append({"isotopologue": iso.code, "upper": vu, "lower": vl, "lines": int(n),
                      "intensity_296K": float(s.sum())})
    return bands


def _o3_levels(state, j_max):
    """Levels of one O3 vibrational state, keeping those the 16O spin statistics allow:
    Ka + Kc even in A1 states, odd in B2 states (see ``linedata/o3_constants.toml``)."""
    lv = rotational_levels(state, j_max)
    keep = (lv["ka"] + lv["kc"]) % 2 == (0 if state["symmetry"] == "A1" else 1)
    out = {k: lv[k][keep] for k in ("j", "ka", "kc", "energy")}
    out["vectors"] = [v for v, k in zip(lv["vectors"], keep) if k]
    return out


def generate_o3(table=None):
    """Generate the built-in O3 line list (nu3, nu1, nu2 and pure rotation of 16O3).

    Each vibration-rotation band is distributed over its lines by the
    rigid-transition-moment strengths R of :func:`line_strengths` and scaled to the
    band intensity of the table; the pure rotation band takes its absolute
    intensities from the permanent dipole, the partition function and
    :data:`INTENSITY_CONSTANT`.

    Parameters
    ----------
    table : dict, optional
        Constants (default ``linedata/o3_constants.toml``).

    Returns
    -------
    LineList
        Lines in record units, sorted by wavenumber, with provenance.
    """
    table, digest, iso, q296, jmax, smin = _generation_setup("O3", table, load_o3_table)
    states = {name: _o3_levels(c, jmax) for name, c in table["state"].items()}
    cols = new_columns()
    br = table["broadening"]
    bands = []
    for band in table["band"]:
        up, lo = states[band["upper"]], states[band["lower"]]
        dipole = float(band.get("dipole", 1.0))
        iu, il, r = line_strengths(up, lo, dipole, band["axis"])
        if band["upper"] == band["lower"]:  # pure rotation: each pair once, lower level below
            keep = up["energy"][iu] > lo["energy"][il]
            iu, il, r = iu[keep], il[keep], r[keep]
        nu = up["energy"][iu] - lo["energy"][il]
        s = _intensity(nu, lo["energy"][il], 1.0, r, iso.abundance, q296)
        if band["intensity"] != "dipole":
            s = s * float(band["intensity"]) / s.sum()
        total = float(s.sum())
        ok = (s >= smin) & (nu > 0)
        iu, il, nu, s = iu[ok], il[ok], nu[ok], s[ok]
        n = nu.size
        j_low = lo["j"][il]
        gamma_air = np.maximum(br["gamma_air_floor"],
                               br["gamma_air_amplitude"] * np.exp(-j_low / br["gamma_air_scale"]))
        append_line_parameters(cols, molecule_id("O3"), iso.local_id, nu, s, lo["energy"][il], gamma_air, br)
        vu, vl = band["upper"], band["lower"]
        _append_labels(cols, vu, vl, up, lo, iu, il, 2 * up["j"][iu] + 1, 2 * j_low + 1)
        bands.append({"upper": vu, "lower": vl, "axis": band["axis"], "lines": int(n), "intensity_296K": total,
                      "kept_intensity_296K": float(s.sum()), "basis": band["basis"]})
    out = finish_columns(cols)
    return LineList(out, {"generator": {"molecule": "O3", "table": "linedata/o3_constants.toml",
                                        "table_sha256": digest, "j_max": jmax, "bands": bands}})
