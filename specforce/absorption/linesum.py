"""Absorption: line parameters of a layer, and its optical depth at any set of wavenumbers.

:func:`layer_lines` turns line data and a layer's state into the per-line
quantities that absorption needs (:class:`LayerLines`); :func:`optical_depth` is
the one function that sums them into a layer's optical depth on a grid. The
longwave pipeline and the tests both call it. Three methods, selected per call:

``"tiered"`` (default, any sorted wavenumbers)
    line cores evaluated exactly at the wavenumbers, intermediate wings on
    uniform tiers, far wings by fast Fourier transform convolution with the
    Voigt profile's asymptotic expansion; lines too weak to matter at their
    centre keep their exact wings and area with a smoothed core (see
    :mod:`specforce.absorption._tiered`). Its cost grows with the lines and the points,
    not with the finest line width anywhere.
``"multigrid"`` (uniform grids only)
    the earlier fast method: each line profile split by smooth windows into a
    core on the grid and wing pieces on grids ``ratio`` times coarser, each
    interpolated down with cubic Lagrange interpolation (the multigrid method of
    Fomin 1995 and Sparks 1997). It serves the uniform reference path.
``"direct"`` (any wavenumbers)
    the reference: every line evaluated at every wavenumber within the cut-off.

Line shape conventions (shared by all methods)
----------------------------------------------
* Voigt profile (see :mod:`specforce.absorption.lineshapes`) centred on the pressure-shifted
  position.
* Each line takes a line treatment (:class:`specforce.absorption.treatments.LineTreatment`):
  its cut-off (25 cm-1 from line centre by default, common practice, or None for
  none: in practice the whole grid), the taper to zero over the last ``taper``
  cm-1 before the cut-off (default 1 cm-1, a C3 smoothstep, in every method), the
  optional subtraction of the profile's value at the cut-off (a "pedestal"
  subtraction, for use with continuum models defined that way), and a far-wing
  factor (none by default; the CO2 chi factor of Perrin & Hartmann 1989 is one).
  :class:`LayerLines` carry each line's index into their tuple of treatments; the
  kernels read the treatments from :func:`specforce.absorption.treatments.treatment_table`.
  Which gas takes which treatment is decided by the caller (the longwave column,
  from its settings).
* The radiation term nu tanh(c2 nu / 2T) (Clough et al. 1989) multiplies each
  line; switch it off with ``radiation_term=False`` to get S f(nu - nu0).

References
----------
Fomin, B. A. (1995), Effective interpolation technique for line-by-line
calculations of radiation absorption in gases, JQSRT 53(6), 663-669 (from memory).
Sparks, L. (1997), Efficient line-by-line calculation of absorption
coefficients to high numerical accuracy, JQSRT 57(5), 631-650 (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import _interp_kernels as _ik
from . import _kernels as _k
from . import _params_kernel as _pk
from ._tiered import DistantWings, TieredTuning, distant_wings as _distant_wings, tiered_sum
from ..constants import REFERENCE_TEMPERATURE
from ..molecular.lineparams import doppler_halfwidth, partition_ratio_at
from .lineshapes import voigt_halfwidth
from .treatments import CO2_CHI_CUTOFF, DEFAULT_CUTOFF, LineTreatment, treatment_table
from ..molecular.molecules import DETAILED_MOLECULES, isotopologue, molecule_name
from ..errors import InternalError, ProfileError, SettingsError

__all__ = [
    "LayerState",
    "LayerLines",
    "TieredTuning",
    "layer_lines",
    "optical_depth",
    "distant_wings",
    "DistantWings",
    "cross_section",
    "DEFAULT_CUTOFF",
    "CO2_CHI_CUTOFF",
    "METHODS",
]

#: The summation methods of :func:`optical_depth`.
METHODS = ("tiered", "multigrid", "direct")
#: The treatments of lines for which none is given: one, the default :class:`LineTreatment`.
PLAIN = (LineTreatment(),)


@dataclass(frozen=True)
class LayerState:
    """Thermodynamic state of one homogeneous layer.

    Attributes
    ----------
    pressure : float
        Total pressure [Pa].
    temperature : float
        Temperature [K].
    partial_pressure : float
        Partial pressure of the absorbing gas [Pa] (for self-broadening).
    """

    pressure: float
    temperature: float
    partial_pressure: float = 0.0

    def __post_init__(self):
        if not (self.pressure > 0 and math.isfinite(self.pressure)):
            raise ProfileError(f"LayerState.pressure must be positive and finite [Pa], got {self.pressure}")
        if not (100.0 <= self.temperature <= 400.0):
            raise ProfileError(f"LayerState.temperature must lie in 100-400 K, got {self.temperature}")
        if not (0.0 <= self.partial_pressure <= self.pressure):
            raise ProfileError(
                f"LayerState.partial_pressure must lie in [0, pressure], got {self.partial_pressure} "
                f"with pressure {self.pressure}"
            )


_LINE_FIELDS = ("centre", "strength", "doppler_hwhm", "lorentz_hwhm", "treatment", "peak_optical_depth", "ident")


@dataclass
class LayerLines:
    """The lines of one layer, ready to be summed (all arrays sorted by centre).

    Attributes
    ----------
    centre : numpy.ndarray
        Pressure-shifted line positions [cm-1].
    strength : numpy.ndarray
        Intensity at the layer temperature times the absorber column, divided by the
        radiation term at the line centre when that is on [cm-1].
    doppler_hwhm, lorentz_hwhm : numpy.ndarray
        Doppler and Lorentz half-widths at half maximum [cm-1].
    treatment : numpy.ndarray of int
        Each line's index into ``treatments``.
    peak_optical_depth : numpy.ndarray
        Upper bound of the line's optical depth at its centre, min(Doppler, Lorentz
        peak) x strength x radiation term [dimensionless]; it decides which lines a
        grid must resolve and which the tiered method treats exactly.
    ident : numpy.ndarray of int
        Identity of each line, the same in every layer (its row in the line list plus
        an offset per gas), so that lines can be followed across layers.
    temperature : float
        Layer temperature [K] (for the radiation term on the grid).
    radiation_term : bool
        Whether strengths are divided by the radiation term at the centre (and sums
        are multiplied by it on the grid).
    treatments : tuple of LineTreatment
        The treatments the lines take, at the layer's temperature; the first is the default
        one (its cut-off also bounds the tiered method's near parts when no line takes it).
    """

    centre: np.ndarray
    strength: np.ndarray
    doppler_hwhm: np.ndarray
    lorentz_hwhm: np.ndarray
    treatment: np.ndarray
    peak_optical_depth: np.ndarray
    ident: np.ndarray
    temperature: float
    radiation_term: bool = True
    treatments: tuple = PLAIN

    def __len__(self):
        return int(self.centre.size)

    @property
    def voigt_hwhm(self):
        """Voigt half-widths at half maximum (Olivero & Longbothum 1977) [cm-1]."""
        return voigt_halfwidth(self.doppler_hwhm, self.lorentz_hwhm)

    def _pick(self, index):
        return LayerLines(*(getattr(self, f)[index] for f in _LINE_FIELDS), self.temperature, self.radiation_term,
                          self.treatments)

    def window(self, lower, upper):
        """The lines with lower <= centre <= upper [cm-1]."""
        return self._pick(slice(int(np.searchsorted(self.centre, lower)),
                                int(np.searchsorted(self.centre, upper, side="right"))))

    @classmethod
    def merge(cls, parts, temperature=None, radiation_term=True):
        """One sorted set from line sets of the same layer (their treatments joined, indices renumbered)."""
        parts = [p for p in parts if p is not None]
        if not parts:
            return cls(*(np.zeros(0) for _ in range(4)), np.zeros(0, np.int64), np.zeros(0), np.zeros(0, np.int64),
                       temperature or REFERENCE_TEMPERATURE, radiation_term)
        if len(parts) == 1:
            return parts[0]
        if any(p.temperature != parts[0].temperature for p in parts):  # treatments hold the layer's temperature
            temps = ", ".join(str(p.temperature) for p in parts)
            raise InternalError(f"LayerLines.merge: parts of different layers ({temps} K)")
        treatments, renumbered = [], []
        for p in parts:
            index = []
            for t in p.treatments:
                if t not in treatments:
                    treatments.append(t)
                index.append(treatments.index(t))
            renumbered.append(np.asarray(index, np.int64)[p.treatment])
        cols = {f: np.concatenate([getattr(p, f) for p in parts]) for f in _LINE_FIELDS if f != "treatment"}
        cols["treatment"] = np.concatenate(renumbered)
        order = np.argsort(cols["centre"], kind="stable")
        return cls(*(np.ascontiguousarray(cols[f][order]) for f in _LINE_FIELDS), parts[0].temperature,
                   parts[0].radiation_term, tuple(treatments))


def layer_lines(lines, state, column=1.0, treatments=PLAIN, treatment=None, *, radiation_term=True,
                partial_pressure=None, ident=None, ident_offset=0):
    """Line parameters of a layer: positions, strengths and widths at its pressure and temperature.

    Parameters
    ----------
    lines : LineList
        Lines with at least wavenumber, intensity, lower_energy, gamma_air,
        gamma_self, n_air, delta_air, molecule and isotopologue, sorted by wavenumber
        (of one gas or of several).
    state : LayerState
        Pressure, temperature and partial pressure of the absorber.
    column : float or numpy.ndarray
        Absorber column of the layer [molecule cm-2], one value or one per line (the
        column of each line's gas); 1 gives cross-sections.
    treatments : tuple of LineTreatment
        The treatments the lines take (the first is the default one); far-wing factors
        that depend on temperature are taken at the layer's (``LineTreatment.at_temperature``).
    treatment : numpy.ndarray of int, optional
        Each line's index into ``treatments`` (default: all 0).
    radiation_term : bool
        Include the nu tanh(c2 nu / 2T) radiation term.
    partial_pressure : numpy.ndarray, optional
        Partial pressure of each line's gas [Pa], replacing ``state.partial_pressure``.
    ident : numpy.ndarray of int, optional
        Identity of each line (see :class:`LayerLines`); default its row number plus
        ``ident_offset``.
    ident_offset : int
        Added to each line's row number to give its ``ident`` when ``ident`` is not given.

    Returns
    -------
    LayerLines
    """
    treatments = tuple(treatments)
    if not treatments or not all(isinstance(t, LineTreatment) for t in treatments):
        raise SettingsError(f"treatments must be a non-empty sequence of LineTreatment, got {treatments!r}")
    p, t = state.pressure, state.temperature
    treatments = tuple(tr.at_temperature(t) for tr in treatments)  # far-wing factors at the layer's temperature
    wn = lines.wavenumber
    if treatment is None:
        treatment = np.zeros(wn.size, np.int64)
    treatment = np.asarray(treatment, dtype=np.int64)
    if treatment.shape != wn.shape or (treatment.size and not 0 <= treatment.min() <= treatment.max()
                                       < len(treatments)):
        raise SettingsError(f"treatment must give each of the {wn.size} lines an index into the "
                            f"{len(treatments)} treatments")
    groups, which = lines.isotopologue_index()
    # per isotopologue: Q(296 K) / Q(T) and the molar mass (every molecule with a mass has partition data)
    ratio, mass = np.empty(len(groups)), np.empty(len(groups))
    for k, (m, i, _) in enumerate(groups):
        name = molecule_name(m)
        if name not in DETAILED_MOLECULES:
            raise SettingsError(
                f"no molecular mass for {name}; select molecules among "
                f"{', '.join(DETAILED_MOLECULES)} before computing absorption"
            )
        ratio[k] = partition_ratio_at(name, i, t)
        mass[k] = isotopologue(m, i).molar_mass
    n = wn.size
    pp = np.broadcast_to(np.asarray(state.partial_pressure if partial_pressure is None else partial_pressure,
                                    dtype=float), (n,))
    col = np.broadcast_to(np.asarray(column, dtype=float), (n,))
    c = lines.columns
    centre, s_t, alpha, gamma, peak_tau, ordered = _pk.layer_parameters(
        wn, c["intensity"], c["lower_energy"], c["gamma_air"], c["gamma_self"], c["n_air"], c["delta_air"], which,
        ratio, doppler_halfwidth(1.0, t, mass), float(p), float(t), np.ascontiguousarray(pp), np.ascontiguousarray(col),
        bool(radiation_term))
    # sorted by wavenumber, the lines are sorted by centre unless the pressure shifts reorder neighbours
    order = slice(None) if ordered else np.argsort(centre, kind="stable")
    if ident is None:
        ident = ident_offset + np.arange(wn.size, dtype=np.int64)
    return LayerLines(*(np.ascontiguousarray(a[order]) for a in (centre, s_t, alpha, gamma, treatment, peak_tau,
                                                                  np.asarray(ident, np.int64))),
                      temperature=float(t), radiation_term=bool(radiation_term), treatments=treatments)


def _pedestals(lines, used, table):
    """Each line's profile value at its cut-off where its treatment subtracts it, else 0 [cm]."""
    treatments, tix = lines.treatments, lines.treatment
    sub = np.zeros(len(lines))
    for t in used:
        tr = treatments[t]
        if tr.subtract_cutoff and tr.cutoff is not None:
            pedestal = _k.voigt_per_line(table[t, 0], lines.doppler_hwhm, lines.lorentz_hwhm)
            if tr.far_wing.code != 0:
                pedestal = pedestal * _k.far_wing(t, abs(table[t, 0]), table)
            sub = np.where(tix == t, pedestal, sub)
    return sub


def distant_wings(lines, lower, upper, tuning=None, *, reach=None, into=None):
    """The distant wings of a layer's long-reaching lines, for :func:`optical_depth` on any
    points in [lower, upper] [cm-1].

    Lines that reach more than twice ``TieredTuning.far_split`` (the CO2 lines with the chi
    factor reach 250 cm-1) have their wings beyond R_2 / 2 summed on a coarse grid. Computed
    once for a layer's lines over a whole range, they let each spectral block pass only the
    lines within R_2 of it (see :mod:`specforce.absorption._tiered`).

    Parameters
    ----------
    lines : LayerLines
        Every line within reach of [lower, upper].
    lower, upper : float
        The range of the points [cm-1].
    tuning : TieredTuning, optional
    reach : float, optional
        How far the coarse grid extends beyond [lower, upper] [cm-1] (default: the longest
        cut-off of the treatments); pass the same value for every window of lines whose
        wings are to be added up.
    into : DistantWings, optional
        The wings of other lines on the same grid, to add these to.

    Returns
    -------
    DistantWings or None
        None (or ``into``) where no line reaches that far.
    """
    if len(lines) == 0:
        return into
    tix = np.ascontiguousarray(lines.treatment, dtype=np.int64)
    table = treatment_table(lines.treatments, max(upper - lines.centre[0], lines.centre[-1] - lower) + 1.0)
    counts = np.bincount(tix, minlength=len(lines.treatments))
    sub = _pedestals(lines, [t for t in range(len(lines.treatments)) if counts[t]], table)
    return _distant_wings(float(lower), float(upper), lines.centre, lines.strength, lines.doppler_hwhm,
                          np.ascontiguousarray(lines.lorentz_hwhm, dtype=float), sub, tix, lines.treatments, table,
                          tuning or TieredTuning(), reach, into)


def optical_depth(lines, wavenumber, *, method="tiered", exact_tau=0.0, tuning=None, distant=None):
    """Optical depth of a layer's lines at the given wavenumbers.

    Parameters
    ----------
    lines : LayerLines
        From :func:`layer_lines` (with the layer's column); every line within the
        cut-off of the wavenumbers must be included. Each line's treatment (cut-off,
        taper, pedestal, far-wing factor) and the radiation term are taken from it.
    wavenumber : numpy.ndarray
        Sorted wavenumbers [cm-1]; uniform for ``method="multigrid"``.
    method : {"tiered", "multigrid", "direct"}
        Summation method (see the module docstring).
    exact_tau : float
        For ``"tiered"``: lines whose ``peak_optical_depth`` is below this value get
        a smoothed core (0, the default, treats every line exactly).
    tuning : TieredTuning or dict, optional
        For ``"tiered"`` a :class:`TieredTuning`; for ``"multigrid"`` a dict with
        ``ratio`` (4), ``dfac`` (160: the window of grid k reaches dfac x its
        spacing), ``resolve`` (8: a line starts on the coarsest grid whose spacing
        is at most its half-width / resolve) and ``taper_points`` (4: the coarsest
        grid's spacing is at most taper / taper_points).

    Returns
    -------
    numpy.ndarray
        Optical depth [dimensionless] at each wavenumber (non-negative).
    """
    x = np.ascontiguousarray(wavenumber, dtype=float)
    if x.ndim != 1 or x.size < 1:
        raise SettingsError("wavenumber must be a 1-D array of at least one value [cm-1]")
    if x.size > 1 and not np.all(x[1:] > x[:-1]):
        raise SettingsError("wavenumber must be strictly increasing")
    if method not in METHODS:
        raise SettingsError(f"method must be one of {', '.join(METHODS)}, got {method!r}")
    if len(lines) == 0:
        if distant is None or method != "tiered":
            return np.zeros(x.size)
        out = np.zeros(x.size)
        _ik.interp_add(distant.start, distant.step, distant.values, x, out)
        _pk.clip_times_radiation_term(out, x, float(lines.temperature), bool(lines.radiation_term))
        return out
    treatments = lines.treatments
    tix = np.ascontiguousarray(lines.treatment, dtype=np.int64)
    # no cut-off: every line reaches every point
    full = max(x[-1] - lines.centre[0], lines.centre[-1] - x[0]) + 1.0
    table = treatment_table(treatments, full)
    counts = np.bincount(tix, minlength=len(treatments))
    used = [t for t in range(len(treatments)) if counts[t]]
    sub = _pedestals(lines, used, table)
    args = (lines.centre, lines.strength, lines.doppler_hwhm, np.ascontiguousarray(lines.lorentz_hwhm, dtype=float))
    if method in ("direct", "multigrid"):
        # the multigrid hierarchy follows one cut-off and taper: one sum per distinct pair (the direct
        # sum too, which keeps its order of summation, and so its last bits, as before treatments)
        out = np.zeros(x.size)
        pairs = {}
        for t in used:
            pairs.setdefault((table[t, 0], table[t, 1]), []).append(t)
        for (cut, tap), ts in pairs.items():
            mask = slice(None) if len(pairs) == 1 else np.isin(tix, ts)
            part = tuple(np.ascontiguousarray(a[mask]) for a in (*args, sub, tix))
            if method == "direct":
                out += _k.direct_points(x, *part, table, float(cut))
            else:
                out += _multigrid(x, *part, table, cut, tap, tuning)
    else:
        if isinstance(tuning, dict):
            tuning = TieredTuning(**tuning)
        exact = np.ascontiguousarray(lines.peak_optical_depth >= exact_tau)
        out = tiered_sum(x, *args, sub, tix, exact, treatments, table, tuning or TieredTuning(), distant)
    # interpolation can undershoot below zero where a wing fades out at the edge of a line's
    # reach (about 1e-4 of the local wing value); an optical depth is non-negative
    _pk.clip_times_radiation_term(out, x, float(lines.temperature), bool(lines.radiation_term))
    return out


def _multigrid(x, centre, strength, alpha, gamma, sub, treatment, table, cutoff, taper, tuning):
    step = (x[-1] - x[0]) / (x.size - 1) if x.size > 1 else 1.0
    if x.size < 2 or not np.allclose(np.diff(x), step, rtol=1e-6, atol=1e-12):
        raise SettingsError("method 'multigrid' needs a uniform grid (see specforce.absorption.grids.uniform_grid)")
    n = x.size
    cfg = {"ratio": 4, "dfac": 160.0, "resolve": 8.0, "taper_points": 4.0, **(tuning or {})}
    ratio, dfac, resolve = int(cfg["ratio"]), float(cfg["dfac"]), float(cfg["resolve"])
    width = voigt_halfwidth(alpha, gamma)
    # the coarsest grid must also resolve the taper, or it smears the fall to zero at the cut-off
    top_max = taper / float(cfg["taper_points"]) if taper > 0 else math.inf
    nlev = 1
    while (dfac * step * ratio ** (nlev - 1) / 2.0 < cutoff and (n - 1) // ratio**nlev >= 4
           and step * ratio**nlev <= top_max):
        nlev += 1
    # base grid: the coarsest grid whose spacing still resolves the line (h <= width / resolve)
    base = np.floor(np.log(np.maximum(width / (resolve * step), 1.0)) / np.log(ratio)).astype(np.int64)
    base = np.minimum(base, nlev - 1)
    return _k.multigrid_sum(x[0], step, n, ratio, nlev, dfac, base, centre, strength, alpha, gamma, sub, treatment,
                            table, float(cutoff))


def cross_section(lines, wavenumber, state, *, method="tiered", treatments=PLAIN, treatment=None,
                  radiation_term=True, tuning=None):
    """Absorption cross-section of a set of lines at the given wavenumbers.

    Parameters
    ----------
    lines : LineList
        Lines with at least wavenumber, intensity, lower_energy, gamma_air,
        gamma_self, n_air, delta_air, molecule and isotopologue. Lines that lie
        outside the wavenumbers but within the cut-off must be included.
    wavenumber : numpy.ndarray
        Sorted wavenumbers [cm-1] (uniform for ``method="multigrid"``).
    state : LayerState
        Pressure, temperature and partial pressure of the layer.
    treatments, treatment, radiation_term : as for :func:`layer_lines`.
    method, tuning : as for :func:`optical_depth` (every line exact).

    Returns
    -------
    numpy.ndarray
        Cross-section [cm2 molecule-1] at each wavenumber: the sum over lines of
        S(T) f(nu - nu0) (times the radiation-term ratio). Multiply by a column
        amount [molecule cm-2] for optical depth.
    """
    return optical_depth(layer_lines(lines, state, 1.0, treatments, treatment, radiation_term=radiation_term),
                         wavenumber, method=method, tuning=tuning)
