"""Molecules, isotopologues and total internal partition functions Q(T).

The numbering follows the 160-character line record (molecule 1 = H2O, 2 = CO2,
...; isotopologue 1 is the most abundant). Abundances, isotope masses and the
constants of the partition-function model live in readable tables in
``linedata/`` with their sources; molar masses are computed from isotope masses.

Partition functions
-------------------
specforce computes Q(T) itself, as the product of a quantum sum over rotational
levels and a harmonic-oscillator vibrational factor (the rigid-rotor harmonic-
oscillator model, e.g. Herzberg 1945; McDowell 1988). Line intensities need only
the ratio Q(296 K)/Q(T), which this model gives to a few parts per thousand at
atmospheric temperatures. For a minor isotopologue the temperature dependence of
the main isotopologue is used, anchored to the tabulated Q(296 K): isotopic
substitution changes rotational constants (which cancel in the ratio in the
classical limit) and shifts vibrational wavenumbers by a few per cent.
"""

from __future__ import annotations

import functools
import tomllib
from dataclasses import dataclass
from importlib import resources

import numpy as np

from ..constants import REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K
from ..errors import MoleculeError

__all__ = [
    "Isotopologue",
    "atomic_mass",
    "molecule_id",
    "molecule_name",
    "known_molecule_ids",
    "isotopologue",
    "isotopologues",
    "isotopologue_groups",
    "partition_function",
    "partition_ratio",
    "rotational_partition_function",
    "vibrational_partition_function",
    "isotopologue_code_to_local_id",
    "DETAILED_MOLECULES",
]

@dataclass(frozen=True)
class Isotopologue:
    """One isotopologue of a molecule.

    Attributes
    ----------
    molecule : str
        Molecule formula, e.g. ``"CO2"``.
    molecule_id : int
        Molecule number in the line-record format.
    local_id : int
        Isotopologue number within the molecule (1 = most abundant; 10 is written
        ``0`` and 11, 12, ... ``A``, ``B``, ... in the record).
    code : str
        Short isotope code, e.g. ``"626"`` for 16O-12C-16O.
    abundance : float
        Natural terrestrial abundance used to weight line intensities [1].
    molar_mass : float
        Molar mass [kg mol-1], computed from isotope masses.
    q296_reference : float
        Tabulated Q(296 K) distributed with the line data (from memory; see
        ``linedata/isotopologues.toml``), used for checks and to anchor minor
        isotopologues.
    """

    molecule: str
    molecule_id: int
    local_id: int
    code: str
    abundance: float
    molar_mass: float
    q296_reference: float


def _load_toml(name):
    with resources.files("specforce.linedata").joinpath(name).open("rb") as fh:
        return tomllib.load(fh)


@functools.cache
def _tables():
    iso_table = _load_toml("isotopologues.toml")
    masses = _isotope_masses()
    names = {int(k): v for k, v in iso_table["molecule_names"].items()}
    ids = {v: k for k, v in names.items()}
    isos = {}
    for row in iso_table["isotopologue"]:
        mol = row["molecule"]
        try:
            mass_g = sum(masses[a] for a in row["atoms"])
        except KeyError as exc:  # a table error, caught by the tests
            raise MoleculeError(
                f"linedata/isotopologues.toml: isotope {exc.args[0]!r} of {mol} "
                f"{row['code']} has no mass in linedata/isotope_masses.toml"
            ) from None
        iso = Isotopologue(
            molecule=mol,
            molecule_id=ids[mol],
            local_id=int(row["local_id"]),
            code=str(row["code"]),
            abundance=float(row["abundance"]),
            molar_mass=mass_g * 1e-3,
            q296_reference=float(row["q296"]),
        )
        isos[(iso.molecule_id, iso.local_id)] = iso
    return names, ids, isos


@functools.cache
def _isotope_masses():
    return _load_toml("isotope_masses.toml")["mass"]


def atomic_mass(isotope):
    """Atomic mass of an isotope such as "13C" or "18O" [u = g mol-1] (``linedata/isotope_masses.toml``)."""
    try:
        return float(_isotope_masses()[isotope])
    except KeyError:
        raise MoleculeError(f"no atomic mass for isotope {isotope!r} in linedata/isotope_masses.toml") from None


def known_molecule_ids():
    """Return the sorted molecule numbers known to the line-record reader."""
    return sorted(_tables()[0])


def molecule_id(molecule):
    """Return the molecule number for a formula or number.

    Parameters
    ----------
    molecule : str or int
        Formula such as ``"CO2"`` (case-insensitive) or the number itself.

    Examples
    --------
    >>> molecule_id("co2")
    2
    """
    names, ids, _ = _tables()
    if isinstance(molecule, (int, np.integer)):
        if int(molecule) in names:
            return int(molecule)
        raise MoleculeError(
            f"molecule number {molecule} is unknown; known numbers are "
            f"{min(names)}-{max(names)} in the line-record numbering"
        )
    key = str(molecule).strip()
    for name, num in ids.items():
        if name.lower() == key.lower():
            return num
    if key.isdigit():
        return molecule_id(int(key))
    raise MoleculeError(
        f"molecule {molecule!r} is unknown; use a formula such as "
        f"{', '.join(DETAILED_MOLECULES)} or a molecule number"
    )


def molecule_name(molecule):
    """Return the formula of a molecule given its number or formula."""
    return _tables()[0][molecule_id(molecule)]


def isotopologue_code_to_local_id(char):
    """Translate the one-character isotopologue field of a line record.

    ``'1'``-``'9'`` are 1-9, ``'0'`` is 10, and ``'A'``, ``'B'``, ... are
    11, 12, ... (line-record convention since the 2004 edition).
    """
    if len(char) != 1:
        raise MoleculeError(f"isotopologue field must be one character, got {char!r}")
    if char.isdigit():
        return 10 if char == "0" else int(char)
    if "A" <= char <= "Z":
        return 11 + ord(char) - ord("A")
    raise MoleculeError(f"isotopologue field {char!r} is not 0-9 or A-Z")


def isotopologue(molecule, local_id=1):
    """Return the :class:`Isotopologue` for a molecule and isotopologue number."""
    mid = molecule_id(molecule)
    isos = _tables()[2]
    try:
        return isos[(mid, int(local_id))]
    except KeyError:
        have = sorted(i for (m, i) in isos if m == mid)
        if not have:
            raise MoleculeError(
                f"no isotopologue data for {molecule_name(mid)}; data exist for "
                f"{', '.join(DETAILED_MOLECULES)}"
            ) from None
        raise MoleculeError(
            f"{molecule_name(mid)} has no isotopologue {local_id}; known are {have}"
        ) from None


def isotopologue_groups(molecule, isotopologue):
    """Rows of each (molecule, isotopologue) pair in line columns.

    Parameters
    ----------
    molecule, isotopologue : numpy.ndarray of int
        Each line's molecule and isotopologue numbers.

    Returns
    -------
    list of (int, int, numpy.ndarray)
        (molecule number, isotopologue number, sorted row indices), in number order.
    """
    key = np.asarray(molecule, np.int64) * 1000 + np.asarray(isotopologue, np.int64)
    order = np.argsort(key, kind="stable")
    ordered = key[order]
    starts = np.concatenate(([0], np.flatnonzero(np.diff(ordered)) + 1)) if key.size else np.zeros(0, int)
    ends = np.concatenate((starts[1:], [key.size])) if key.size else starts
    return [(int(ordered[a] // 1000), int(ordered[a] % 1000), np.sort(order[a:b])) for a, b in zip(starts, ends)]


def isotopologues(molecule=None):
    """Return all known isotopologues, or those of one molecule, in table order."""
    isos = _tables()[2].values()
    if molecule is None:
        return list(isos)
    mid = molecule_id(molecule)
    return [i for i in isos if i.molecule_id == mid]


# --------------------------------------------------------------------------- Q(T)


@functools.cache
def _model_constants():
    return _load_toml("partition_constants.toml")


#: Molecules with full isotopologue data and partition functions: those of
#: ``linedata/partition_constants.toml``, in line-record order.
DETAILED_MOLECULES = tuple(sorted(_model_constants(), key=molecule_id))


def _asymmetric_rotor_levels(a, b, c, j_max):
    """Rigid asymmetric-rotor term values [cm-1] and their (2J+1) weights.

    The Hamiltonian in the symmetric-top basis with the quantisation axis along
    the a axis (type I^r representation) is
    H = A Ka^2 + (B+C)/2 (J^2 - Ka^2) + (B-C)/4 (J+^2 + J-^2);
    its matrix elements are standard (Gordy & Cook 1984, Microwave Molecular
    Spectra, 3rd ed., Wiley, ch. 7). It couples K only to K +- 2, so for each J
    the even-K and odd-K sets are two tridiagonal matrices, diagonalised apart.
    """
    from scipy.linalg import eigvalsh_tridiagonal

    energies, weights = [], []
    for j in range(j_max + 1):
        jj = j * (j + 1.0)
        for parity in (0, 1):
            k = np.arange(-j + ((j + parity) % 2), j + 1, 2, dtype=float)  # K = -j..j with K % 2 == parity
            if k.size == 0:
                continue
            diag = a * k**2 + 0.5 * (b + c) * (jj - k**2)
            off = 0.25 * (b - c) * np.sqrt(jj - k[:-1] * (k[:-1] + 1)) * np.sqrt(jj - (k[:-1] + 1) * (k[:-1] + 2))
            e = eigvalsh_tridiagonal(diag, off) if k.size > 1 else diag
            energies.append(e)
            weights.append(np.full(e.size, 2 * j + 1.0))
    return np.concatenate(energies), np.concatenate(weights)


@functools.cache
def _rotational_levels(molecule):
    """Rotational term values [cm-1] and degeneracies of the model, cached."""
    const = _model_constants()[molecule]
    rotor = const["rotor"]
    # Levels up to about 40 kT at 350 K are enough for 1e-12 relative accuracy.
    e_cut = 40.0 * 350.0 / SECOND_RADIATION_CONSTANT_CM_K
    if rotor in ("linear", "spherical"):
        b, d = const["B"], const.get("D", 0.0)
        j_max = int(np.sqrt(e_cut / b)) + 2
        j = np.arange(j_max + 1, dtype=float)
        e = b * j * (j + 1) - d * (j * (j + 1)) ** 2
        g = 2 * j + 1 if rotor == "linear" else (2 * j + 1) ** 2
        return e, g
    if rotor == "asymmetric":
        c_min = const["C"]
        j_max = int(np.sqrt(e_cut / c_min)) + 2
        return _asymmetric_rotor_levels(const["A"], const["B"], const["C"], j_max)
    raise MoleculeError(f"linedata/partition_constants.toml: unknown rotor {rotor!r}")


def _as_temperature(temperature):
    t = np.asarray(temperature, dtype=float)
    if np.any(~np.isfinite(t)) or np.any(t <= 0):
        raise MoleculeError(f"temperature must be finite and positive [K], got {temperature!r}")
    return t


def rotational_partition_function(molecule, temperature):
    """Rotational partition sum of the main isotopologue, spin and symmetry included.

    Parameters
    ----------
    molecule : str or int
        One of the molecules with detailed data (see ``DETAILED_MOLECULES``).
    temperature : array_like
        Temperature [K].

    Returns
    -------
    numpy.ndarray
        ``g_e * g_ns / sigma * sum_levels g_J exp(-c2 E / T)`` [dimensionless].

    Notes
    -----
    Nuclear-spin statistics are represented by their high-temperature average
    g_ns/sigma (Herzberg 1945, ch. I.5), which is exact to far better than 0.1 %
    above about 100 K for the molecules here.
    """
    name = molecule_name(molecule)
    if name not in DETAILED_MOLECULES:
        raise MoleculeError(f"no partition-function data for {name}")
    const = _model_constants()[name]
    t = _as_temperature(temperature)
    e, g = _rotational_levels(name)
    expo = np.exp(-SECOND_RADIATION_CONSTANT_CM_K * np.multiply.outer(1.0 / t, e))
    q = expo @ g
    return const["g_e"] * const["g_ns"] / const["sigma"] * q


def vibrational_partition_function(molecule, temperature):
    """Harmonic-oscillator vibrational partition function of the main isotopologue.

    .. math:: Q_{vib} = \\prod_i (1 - e^{-c_2 \\nu_i / T})^{-d_i}

    with fundamentals nu_i [cm-1] and degeneracies d_i (Herzberg 1945, ch. V).

    Parameters
    ----------
    molecule : str or int
        Molecule formula or number.
    temperature : array_like
        Temperature [K].
    """
    name = molecule_name(molecule)
    const = _model_constants()[name]
    t = _as_temperature(temperature)
    q = np.ones_like(t)
    for nu, deg in const["vibrations"]:
        q = q * (1.0 - np.exp(-SECOND_RADIATION_CONSTANT_CM_K * nu / t)) ** (-deg)
    return q


def _main_model(name, t):
    return rotational_partition_function(name, t) * vibrational_partition_function(name, t)


def partition_function(molecule, local_id, temperature):
    """Total internal partition function Q(T) of an isotopologue.

    Parameters
    ----------
    molecule : str or int
        Molecule formula or number.
    local_id : int
        Isotopologue number (1 = most abundant).
    temperature : array_like
        Temperature [K]; the model is meant for 150-350 K.

    Returns
    -------
    numpy.ndarray or float
        Q(T) [dimensionless], in the line-record convention (full nuclear-spin
        degeneracy included).

    Notes
    -----
    Main isotopologue: the rigid-rotor harmonic-oscillator model described in the
    module docstring. Other isotopologues:
    Q(T) = Q_ref(296) * Q_main(T) / Q_main(296).

    Examples
    --------
    >>> round(float(partition_function("CO2", 1, 296.0)), 0)
    286.0
    """
    iso = isotopologue(molecule, local_id)
    t = _as_temperature(temperature)
    q = _main_model(iso.molecule, t)
    if iso.local_id != 1:
        q = iso.q296_reference * q / _main_model(iso.molecule, REFERENCE_TEMPERATURE)
    return q if q.ndim else float(q)


def partition_ratio(molecule, local_id, temperature):
    """Return Q(296 K) / Q(T), the factor line intensities need.

    Parameters
    ----------
    molecule : str or int
        Molecule formula or number.
    local_id : int
        Isotopologue number.
    temperature : array_like
        Temperature [K].
    """
    iso = isotopologue(molecule, local_id)
    t = _as_temperature(temperature)
    r = _main_model(iso.molecule, REFERENCE_TEMPERATURE) / _main_model(iso.molecule, t)
    return r if np.ndim(r) else float(r)
