"""Clear-sky longwave radiative transfer: the Schwarzschild equation on layers.

Monochromatic, non-scattering, plane-parallel. For each wavenumber and each
direction mu, the intensity is carried down from the top (no incoming
radiation) and then up from the surface, through layers whose Planck source
varies linearly in optical depth between the layer's bounding levels. Fluxes
are angular integrals F = 2 pi int I mu dmu, by Gauss-Legendre quadrature on
mu in [0, 1] (default 3 nodes) or by the diffusivity approximation (one stream
at mu = 1/1.66, common practice). The surface emits eps B(Ts) and reflects
(1 - eps) of the downward flux isotropically.

Layer solution (linear-in-tau source; e.g. Wiscombe 1976, JQSRT 16, 477; Clough,
Iacono & Moncet 1992, JGR 97, 15761), for slant optical depth t = tau/mu and
transmittance T = exp(-t), with B_in and B_out the source at the entry and exit
sides of the layer::

    I_out = I_in T + B_in (1 - T) + (B_out - B_in) [1 - (1 - T)/t]

which is exact when B is linear in t and tends to the isothermal-layer result
for thin layers and to B_out for thick ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba as nb
import numpy as np

from ..constants import (CP_DRY_AIR, CP_WATER_VAPOUR, FIRST_RADIATION_CONSTANT_L, SECOND_RADIATION_CONSTANT_CM_K,
                        STANDARD_GRAVITY)
from ..errors import SettingsError
from ._depth_check import first_invalid as _first_invalid
from .workers import run_tasks

from .._fastmath import FASTMATH, exp_neg_into as _exp_neg
from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated

__all__ = [
    "planck",
    "planck_temperature_derivative",
    "brightness_temperature",
    "angular_quadrature",
    "spectral_fluxes",
    "source_fluxes",
    "SpectralFluxes",
    "trapezoid_weights",
    "heating_rate",
    "DIFFUSIVITY",
]

#: Diffusivity factor 1/mu for the one-stream approximation (common practice; Elsasser 1942).
DIFFUSIVITY = 1.66


def planck(wavenumber, temperature):
    """Planck spectral radiance per unit wavenumber.

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    temperature : array_like
        T [K] (broadcast against wavenumber).

    Returns
    -------
    numpy.ndarray
        B [W m-2 sr-1 (cm-1)-1].

    Notes
    -----
    .. math:: B_\\nu(T) = \\frac{2 h c^2 \\tilde\\nu^3}{e^{h c \\tilde\\nu / k T} - 1}

    with nu~ in m-1; the factor 1e8 converts (m-1)^3 per m-1 to per cm-1 with nu in
    cm-1 (Planck 1901; e.g. Goody & Yung 1989, Eq. 2.60).
    """
    nu = np.asarray(wavenumber, dtype=float)
    t = np.asarray(temperature, dtype=float)
    with np.errstate(over="ignore"):  # exp overflow where B is 0 to double precision anyway
        return 1e8 * FIRST_RADIATION_CONSTANT_L * nu**3 / np.expm1(SECOND_RADIATION_CONSTANT_CM_K * nu / t)


def planck_temperature_derivative(wavenumber, temperature):
    """Derivative of the Planck radiance per unit wavenumber with respect to temperature.

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    temperature : array_like
        T [K] (broadcast against wavenumber).

    Returns
    -------
    numpy.ndarray
        dB/dT [W m-2 sr-1 (cm-1)-1 K-1].

    Notes
    -----
    .. math:: \\frac{\\partial B_\\nu}{\\partial T} = B_\\nu(T) \\frac{x e^x}{T (e^x - 1)},
              \\quad x = \\frac{c_2 \\tilde\\nu}{T}

    the derivative of :func:`planck` (Planck 1901).
    """
    nu = np.asarray(wavenumber, dtype=float)
    t = np.asarray(temperature, dtype=float)
    x = SECOND_RADIATION_CONSTANT_CM_K * nu / t
    with np.errstate(over="ignore", invalid="ignore"):
        factor = np.where(x < 700.0, x / -np.expm1(-np.minimum(x, 700.0)), 0.0)
    return planck(nu, t) * factor / t


def brightness_temperature(wavenumber, flux):
    """Brightness temperature of a hemispheric flux spectrum [K].

    The temperature of the blackbody whose flux pi B(nu, T) equals ``flux``:
    T = c2 nu / ln(1 + 1e8 c1L nu^3 / (flux / pi)). Zero or negative flux gives NaN.

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    flux : array_like
        Spectral flux [W m-2 (cm-1)-1].
    """
    nu = np.asarray(wavenumber, dtype=float)
    radiance = np.asarray(flux, dtype=float) / np.pi
    with np.errstate(divide="ignore", invalid="ignore"):
        tb = SECOND_RADIATION_CONSTANT_CM_K * nu / np.log1p(1e8 * FIRST_RADIATION_CONSTANT_L * nu**3 / radiance)
    return np.where(radiance > 0, tb, np.nan)


def angular_quadrature(nodes=3, diffusivity=False):
    """Directions mu and flux weights 2 pi w mu for the angular integral.

    Parameters
    ----------
    nodes : int
        Number of Gauss-Legendre nodes on mu in [0, 1].
    diffusivity : bool
        Use one direction mu = 1/1.66 with weight pi instead.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        mu and weights such that F = sum(weights * I(mu)) [W m-2 per unit radiance].
    """
    if diffusivity:
        return np.array([1.0 / DIFFUSIVITY]), np.array([math.pi])
    if nodes < 1:
        raise SettingsError("angular_quadrature: nodes must be at least 1")
    x, w = np.polynomial.legendre.leggauss(int(nodes))
    mu = 0.5 * (x + 1.0)
    return mu, 2.0 * math.pi * 0.5 * w * mu


_C1 = 1e8 * FIRST_RADIATION_CONSTANT_L
_C2 = SECOND_RADIATION_CONSTANT_CM_K
_PLANCK_STRIDE = 32
_PLANCK_SPAN = 0.32  # cm-1: interpolate only where the stride spans at most this


@nb.njit(cache=True, fastmath=True)
def _planck_levels(nu, tlev, tsfc, out):
    """Planck radiance at one wavenumber for every level (out[:-1]) and the surface (out[-1])."""
    x = _C2 * nu
    coef = _C1 * nu**3
    for lev in range(tlev.shape[0]):
        out[lev] = coef / math.expm1(x / tlev[lev]) if x / tlev[lev] < 700.0 else 0.0
    out[tlev.shape[0]] = coef / math.expm1(x / tsfc) if x / tsfc < 700.0 else 0.0


# Points per transfer task: fixed, so that the partial sums, and so the results, do not depend
# on the number of threads.
_RUN_POINTS = 2048


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH, error_model="numpy")
def _rt_run(nu, wnu, tau, tlev, tsfc, eps, mu, wts, keep, lo, hi, spec_up, spec_dn, part_up, part_dn):
    """Fluxes at the points lo..hi-1: adds their broadband sums (weighted by wnu) to part_up and
    part_dn (per level) and writes the spectral fluxes of the levels in ``keep`` to spec_up and
    spec_dn. Serial and without the GIL: callers run one run per thread.

    The points go in segments of up to _PLANCK_STRIDE, each layer and angle over all the
    segment's points at once (loops the compiler vectorises). Planck sources are evaluated
    exactly at the ends of a segment and interpolated linearly in nu inside it; where the
    segment from a point would span more than _PLANCK_SPAN cm-1, that point's sources are
    exact instead (such points are gathered into segments of their own). B varies on scales
    of T / c2 (about 100 cm-1), so the interpolation error is below 1e-6 relative.
    """
    nlay = tau.shape[0]
    nlev = nlay + 1
    na = mu.shape[0]
    nk = keep.shape[0]
    ns = _PLANCK_STRIDE
    tr = np.empty((nlay, na, ns))  # transmittance of each layer, angle and point
    lf = np.empty((nlay, na, ns))  # the linear-in-tau source's factor
    b = np.empty((nlev + 1, ns))  # Planck radiance at the levels and (last row) the surface
    dn = np.empty((nlev, ns))
    up = np.empty((nlev, ns))
    ia = np.empty(ns)
    t = np.empty(ns)
    kbits = np.empty(ns, np.int64)
    scale = kbits.view(np.float64)
    b0 = np.empty(nlev + 1)
    b1 = np.empty(nlev + 1)
    j = lo
    while j < hi:
        jend = min(j + ns, hi - 1)
        interp = jend > j and 0.0 < nu[jend] - nu[j] <= _PLANCK_SPAN
        if interp:
            stop = jend
        else:  # exact sources up to the next point that starts an interpolated segment
            stop = j + 1
            while stop < hi and stop - j < ns:
                je = min(stop + ns, hi - 1)
                if je > stop and 0.0 < nu[je] - nu[stop] <= _PLANCK_SPAN:
                    break
                stop += 1
        m = stop - j
        for lay in range(nlay):
            for a in range(na):
                inv = 1.0 / mu[a]
                for q in range(m):
                    t[q] = tau[lay, j + q] * inv
                _exp_neg(t, m, tr[lay, a], kbits, scale)
                for q in range(m):
                    tq = t[q]
                    small = tq * (0.5 - tq * (1.0 / 6.0 - tq / 24.0))
                    large = 1.0 - (1.0 - tr[lay, a, q]) / max(tq, 1e-3)
                    lf[lay, a, q] = small if tq < 1e-3 else large
        if interp:
            _planck_levels(nu[j], tlev, tsfc, b0)
            _planck_levels(nu[jend], tlev, tsfc, b1)
            span = nu[jend] - nu[j]
            for lev in range(nlev + 1):
                db = b1[lev] - b0[lev]
                for q in range(m):
                    b[lev, q] = b0[lev] + (nu[j + q] - nu[j]) / span * db
        else:
            for q in range(m):
                _planck_levels(nu[j + q], tlev, tsfc, b0)
                for lev in range(nlev + 1):
                    b[lev, q] = b0[lev]
        for lev in range(nlev):
            for q in range(m):
                dn[lev, q] = 0.0
                up[lev, q] = 0.0
        for a in range(na):  # downward, from the top
            wa = wts[a]
            for q in range(m):
                ia[q] = 0.0
            for lay in range(nlay - 1, -1, -1):
                for q in range(m):
                    b_in = b[lay + 1, q]
                    x = ia[q] * tr[lay, a, q] + b_in * (1.0 - tr[lay, a, q]) + (b[lay, q] - b_in) * lf[lay, a, q]
                    ia[q] = x
                    dn[lay, q] += wa * x
        for a in range(na):  # upward, from the surface (emission plus reflected downward flux)
            wa = wts[a]
            for q in range(m):
                ia[q] = eps * b[nlev, q] + (1.0 - eps) * dn[0, q] / math.pi
                up[0, q] += wa * ia[q]
            for lay in range(nlay):
                for q in range(m):
                    b_in = b[lay, q]
                    x = ia[q] * tr[lay, a, q] + b_in * (1.0 - tr[lay, a, q]) + (b[lay + 1, q] - b_in) * lf[lay, a, q]
                    ia[q] = x
                    up[lay + 1, q] += wa * x
        for lev in range(nlev):
            su = 0.0
            sd = 0.0
            for q in range(m):
                su += up[lev, q] * wnu[j + q]
                sd += dn[lev, q] * wnu[j + q]
            part_up[lev] += su
            part_dn[lev] += sd
        for k in range(nk):
            for q in range(m):
                spec_up[k, j + q] = up[keep[k], q]
                spec_dn[k, j + q] = dn[keep[k], q]
        j = stop


@dataclass
class SpectralFluxes:
    """Fluxes of one spectral block.

    Attributes
    ----------
    flux_up, flux_down : numpy.ndarray
        Spectral fluxes [W m-2 (cm-1)-1] at the kept levels, shape (nkeep, n).
    levels : numpy.ndarray
        Indices of the kept levels (0 = surface).
    broadband_up, broadband_down : numpy.ndarray
        Fluxes integrated over the block with the given weights [W m-2], every level.
    """

    flux_up: np.ndarray
    flux_down: np.ndarray
    levels: np.ndarray
    broadband_up: np.ndarray
    broadband_down: np.ndarray


def spectral_fluxes(wavenumber, optical_depth, level_temperature, surface_temperature, surface_emissivity=1.0,
                    *, nodes=3, diffusivity=False, keep_levels=None, weights=None, pool=None):
    """Monochromatic upward and downward fluxes, and their integrals over the block.

    Parameters
    ----------
    wavenumber : numpy.ndarray
        Grid [cm-1], shape (n,).
    optical_depth : numpy.ndarray
        Vertical optical depth of each layer [dimensionless], shape (nlayers, n),
        layer 0 at the bottom.
    level_temperature : numpy.ndarray
        Temperature at the nlayers + 1 levels [K], surface first.
    surface_temperature : float
        Skin temperature [K].
    surface_emissivity : float
        Emissivity, 0-1.
    nodes : int
        Gauss-Legendre nodes in mu (ignored with ``diffusivity``).
    diffusivity : bool
        One-stream diffusivity approximation (mu = 1/1.66).
    keep_levels : sequence of int, optional
        Levels whose spectral fluxes are returned (default all; 0 = surface).
    weights : numpy.ndarray, optional
        Quadrature weights over wavenumber [cm-1] for the broadband sums
        (default the trapezoidal rule on the grid).
    pool : specforce.radiation.workers.TaskPool, optional
        Threads to run the points on, in runs of a fixed size (default: the calling
        thread). The results do not depend on it.

    Returns
    -------
    SpectralFluxes

    Raises
    ------
    SettingsError
        For inputs of the wrong shape or values out of range; an optical depth that is negative
        or not finite is found by the runs of points as they start (the first one of the first
        run that holds one, layer by layer), after other runs may have been computed.
    """
    nu = np.ascontiguousarray(wavenumber, dtype=float)
    tau = np.ascontiguousarray(optical_depth, dtype=float)
    tlev = np.ascontiguousarray(level_temperature, dtype=float)
    if tau.ndim != 2 or tau.shape[1] != nu.size:
        raise SettingsError(f"optical_depth must have shape (nlayers, {nu.size}), got {tau.shape}")
    if tlev.size != tau.shape[0] + 1:
        raise SettingsError(f"level_temperature needs {tau.shape[0] + 1} values (nlayers + 1), got {tlev.size}")
    if not 0.0 <= surface_emissivity <= 1.0:
        raise SettingsError(f"surface_emissivity must lie in [0, 1], got {surface_emissivity}")
    keep = np.arange(tlev.size) if keep_levels is None else np.asarray(keep_levels, dtype=np.int64)
    if weights is None:
        weights = trapezoid_weights(nu)
    mu, wts = angular_quadrature(nodes, diffusivity)
    wnu = np.ascontiguousarray(weights, dtype=float)
    n, nlev = nu.size, tlev.size
    su, sd = np.zeros((keep.size, n)), np.zeros((keep.size, n))
    starts = range(0, n, _RUN_POINTS)
    parts = np.zeros((len(starts), 2, nlev))

    def run(k):  # each run checks its optical depths (in parallel, while they are in cache)
        lo = starts[k]
        layer, point = _first_invalid(tau, lo, min(n, lo + _RUN_POINTS))
        if layer >= 0:
            raise SettingsError(f"optical_depth must be finite and non-negative: {tau[layer, point]!r} in layer "
                                f"{layer} at point {point} ({nu[point]:.4f} cm-1)")
        _rt_run(nu, wnu, tau, tlev, float(surface_temperature), float(surface_emissivity), mu, wts, keep, lo,
                min(n, lo + _RUN_POINTS), su, sd, parts[k, 0], parts[k, 1])

    run_tasks(pool, run, range(len(starts)))
    return SpectralFluxes(su, sd, keep, parts[:, 0].sum(axis=0), parts[:, 1].sum(axis=0))


def trapezoid_weights(wavenumber):
    """Trapezoidal-rule weights [cm-1] for integrating over a grid."""
    nu = np.asarray(wavenumber, dtype=float)
    if nu.size < 2:
        raise SettingsError("trapezoid_weights needs at least 2 wavenumbers; pass weights= for a single one")
    w = np.empty_like(nu)
    d = np.diff(nu)
    w[0] = d[0] / 2
    w[-1] = d[-1] / 2
    w[1:-1] = (d[:-1] + d[1:]) / 2
    return w


def heating_rate(flux_up, flux_down, pressure_levels, specific_humidity=None, gravity=STANDARD_GRAVITY):
    """Radiative heating rate of each layer from the divergence of the net flux.

    Parameters
    ----------
    flux_up, flux_down : numpy.ndarray
        Broadband fluxes at the levels [W m-2], surface first.
    pressure_levels : numpy.ndarray
        Level pressures [Pa], surface first.
    specific_humidity : numpy.ndarray, optional
        Layer-mean specific humidity [kg kg-1] for the moist heat capacity.
    gravity : float
        [m s-2].

    Returns
    -------
    numpy.ndarray
        Heating rate of each layer [K day-1].

    Notes
    -----
    .. math:: \\frac{\\partial T}{\\partial t} = \\frac{g}{c_p} \\frac{F_n(p_b) - F_n(p_t)}{p_b - p_t}

    with F_n = F_up - F_down and c_p = (1 - q) c_pd + q c_pv for moist air
    (e.g. Petty 2006, A First Course in Atmospheric Radiation, Eq. 10.53).
    """
    fn = np.asarray(flux_up) - np.asarray(flux_down)
    p = np.asarray(pressure_levels, dtype=float)
    q = np.zeros(p.size - 1) if specific_humidity is None else np.asarray(specific_humidity)
    cp = (1.0 - q) * CP_DRY_AIR + q * CP_WATER_VAPOUR
    return gravity / cp * (fn[:-1] - fn[1:]) / (p[:-1] - p[1:]) * 86400.0


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH, error_model="numpy")
def _source_run(tau, b, bs, eps, mu, wts, up, dn):
    """:func:`source_fluxes` column by column: tau (n, nlay), b (n, nlay + 1), bs (n,); adds to up, dn."""
    n, nlay = tau.shape
    tr = np.empty((mu.size, nlay))
    lf = np.empty((mu.size, nlay))
    for j in range(n):
        for m in range(mu.size):
            for lay in range(nlay):
                t = tau[j, lay] / mu[m]
                tr[m, lay] = math.exp(-t)
                lf[m, lay] = t * (0.5 - t * (1.0 / 6.0 - t / 24.0)) if t < 1e-3 else 1.0 - (1.0 - tr[m, lay]) / t
        for m in range(mu.size):
            ia = 0.0
            for lay in range(nlay - 1, -1, -1):
                ia = ia * tr[m, lay] + b[j, lay + 1] * (1.0 - tr[m, lay]) + (b[j, lay] - b[j, lay + 1]) * lf[m, lay]
                dn[j, lay] += wts[m] * ia
        surf = eps * bs[j] + (1.0 - eps) * dn[j, 0] / math.pi
        for m in range(mu.size):
            ia = surf
            up[j, 0] += wts[m] * ia
            for lay in range(nlay):
                ia = ia * tr[m, lay] + b[j, lay] * (1.0 - tr[m, lay]) + (b[j, lay + 1] - b[j, lay]) * lf[m, lay]
                up[j, lay + 1] += wts[m] * ia


def source_fluxes(optical_depth, level_source, surface_source, surface_emissivity=1.0, *, nodes=3,
                  diffusivity=False):
    """Upward and downward fluxes for given sources: the transfer of :func:`spectral_fluxes` for
    columns whose Planck sources are given rather than computed from one wavenumber (the
    g-points of the fast model, :mod:`specforce.kdist`).

    Parameters
    ----------
    optical_depth : numpy.ndarray
        Vertical optical depth of each layer [dimensionless], shape (nlayers, ...), layer 0
        at the bottom; every other index a column of its own.
    level_source : numpy.ndarray
        Source (Planck radiance times the column's spectral width) at every level
        [W m-2 sr-1], shape (nlayers + 1, ...), surface first.
    surface_source : numpy.ndarray
        The same at the skin temperature [W m-2 sr-1], shape (...).
    surface_emissivity : float
        Emissivity, 0-1.
    nodes, diffusivity
        The angular quadrature, as in :func:`spectral_fluxes`.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Upward and downward fluxes at every level [W m-2], each shape (nlayers + 1, ...).

    Notes
    -----
    The source varies linearly in optical depth across each layer, as in
    :func:`spectral_fluxes` (whose kernel is the reference this is tested against).
    """
    tau = np.asarray(optical_depth, dtype=float)
    b = np.asarray(level_source, dtype=float)
    bs = np.asarray(surface_source, dtype=float)
    nlay = tau.shape[0]
    if b.shape != (nlay + 1,) + tau.shape[1:] or bs.shape != tau.shape[1:]:
        raise SettingsError(f"level_source must have shape {(nlay + 1,) + tau.shape[1:]} and surface_source "
                            f"{tau.shape[1:]}, got {b.shape} and {bs.shape}")
    if not 0.0 <= surface_emissivity <= 1.0:
        raise SettingsError(f"surface_emissivity must lie in [0, 1], got {surface_emissivity}")
    mu, wts = angular_quadrature(nodes, diffusivity)
    n = int(np.prod(tau.shape[1:], dtype=np.int64))
    up, dn = np.zeros((n, nlay + 1)), np.zeros((n, nlay + 1))  # column by column: each one's levels together
    _source_run(np.ascontiguousarray(tau.reshape(nlay, n).T), np.ascontiguousarray(b.reshape(nlay + 1, n).T),
                np.ascontiguousarray(bs.reshape(n)), float(surface_emissivity), mu, wts, up, dn)
    return up.T.reshape(b.shape), dn.T.reshape(b.shape)
