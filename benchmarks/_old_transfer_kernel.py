"""The transfer kernel as it was on main e747336 (scalar libm exp, one point at a time), kept only
so that benchmarks/bench_transfer.py can time it beside the current one in the same run."""

import math

import numba as nb
import numpy as np

from specforce.radiation.transfer import _planck_levels, _PLANCK_STRIDE, _PLANCK_SPAN


@nb.njit(cache=True, fastmath=True, inline="always")
def _point(p, nlay, b, bs, eps, mu, wts, tr, lf, dn, up):
    """Up and down fluxes at point p of a segment (b: Planck at levels, bs: at the surface);
    tr and lf hold the segment's transmittances and linear-source factors [lay, angle, point]."""
    nlev = nlay + 1
    na = mu.shape[0]
    for lev in range(nlev):
        dn[lev] = 0.0
        up[lev] = 0.0
    for a in range(na):
        ia = 0.0
        for lay in range(nlay - 1, -1, -1):
            b_in = b[lay + 1]
            ia = ia * tr[lay, a, p] + b_in * (1.0 - tr[lay, a, p]) + (b[lay] - b_in) * lf[lay, a, p]
            dn[lay] += wts[a] * ia
    surf = eps * bs + (1.0 - eps) * dn[0] / math.pi
    for a in range(na):
        ia = surf
        up[0] += wts[a] * ia
        for lay in range(nlay):
            b_in = b[lay]
            ia = ia * tr[lay, a, p] + b_in * (1.0 - tr[lay, a, p]) + (b[lay + 1] - b_in) * lf[lay, a, p]
            up[lay + 1] += wts[a] * ia


# Points per transfer task: fixed, so that the partial sums, and so the results, do not depend
# on the number of threads.
_RUN_POINTS = 2048


@nb.njit(cache=True, nogil=True, fastmath=True)
def _rt_run(nu, wnu, tau, tlev, tsfc, eps, mu, wts, keep, lo, hi, spec_up, spec_dn, part_up, part_dn):
    """Fluxes at the points lo..hi-1: adds their broadband sums (weighted by wnu) to part_up and
    part_dn (per level) and writes the spectral fluxes of the levels in ``keep`` to spec_up and
    spec_dn. Serial and without the GIL: callers run one run per thread.

    Planck sources are evaluated exactly at the ends of segments of up to
    _PLANCK_STRIDE points and interpolated linearly in nu inside them; a segment
    wider than _PLANCK_SPAN cm-1 is evaluated point by point instead. B varies on
    scales of T / c2 (about 100 cm-1), so the interpolation error is below 1e-6
    relative.
    """
    nlay = tau.shape[0]
    nlev = nlay + 1
    na = mu.shape[0]
    nk = keep.shape[0]
    tr = np.empty((nlay, na, _PLANCK_STRIDE))
    lf = np.empty((nlay, na, _PLANCK_STRIDE))
    b = np.empty(nlev)
    dn = np.empty(nlev)
    up = np.empty(nlev)
    b0 = np.empty(nlev + 1)
    b1 = np.empty(nlev + 1)
    j = lo
    while j < hi:
        jend = min(j + _PLANCK_STRIDE, hi - 1)
        interp = jend > j and 0.0 < nu[jend] - nu[j] <= _PLANCK_SPAN
        _planck_levels(nu[j], tlev, tsfc, b0)
        if interp:
            _planck_levels(nu[jend], tlev, tsfc, b1)
        stop = jend if interp else j + 1
        # transmittances of the segment, layer by layer over contiguous points
        for lay in range(nlay):
            for a in range(na):
                inv = 1.0 / mu[a]
                for jj in range(j, stop):
                    t = tau[lay, jj] * inv
                    e = math.exp(-t)
                    tr[lay, a, jj - j] = e
                    if t < 1e-3:
                        lf[lay, a, jj - j] = t * (0.5 - t * (1.0 / 6.0 - t / 24.0))
                    else:
                        lf[lay, a, jj - j] = 1.0 - (1.0 - e) / t
        for jj in range(j, stop):
            f = (nu[jj] - nu[j]) / (nu[jend] - nu[j]) if interp else 0.0
            for lev in range(nlev):
                b[lev] = b0[lev] + f * (b1[lev] - b0[lev]) if interp else b0[lev]
            bs = b0[nlev] + f * (b1[nlev] - b0[nlev]) if interp else b0[nlev]
            _point(jj - j, nlay, b, bs, eps, mu, wts, tr, lf, dn, up)
            w = wnu[jj]
            for lev in range(nlev):
                part_up[lev] += up[lev] * w
                part_dn[lev] += dn[lev] * w
            for k in range(nk):
                spec_up[k, jj] = up[keep[k]]
                spec_dn[k, jj] = dn[keep[k]]
        j = stop


