"""Private: the spectra of the far-wing kernels of the tiered line sum, and the moments of its
windows (see :mod:`specforce.absorption._tiered`, which convolves line impulses with them). Not API.
"""

from __future__ import annotations

import functools
import math
import threading

import numpy as np
import scipy.fft
from scipy import integrate

_ROW_MULTIPLE = 2  # rows of impulses transformed together: a multiple of this


def _smoothstep(u):
    """The C3 smoothstep: 0 for u <= 0, 1 for u >= 1, 35 u^4 - 84 u^5 + 70 u^6 - 20 u^7 between."""
    u = np.clip(u, 0.0, 1.0)
    return 35 * u**4 - 84 * u**5 + 70 * u**6 - 20 * u**7


def _one_minus_window(d, radius):
    """1 - W_R(d) for d >= 0: 0 inside radius / 2, 1 beyond radius, a C3 smoothstep between."""
    return _smoothstep((d - 0.5 * radius) / (0.5 * radius))


@functools.lru_cache(maxsize=64)
def _window_moments(radius):
    """J_n = int (1 - W(|d|)) d^-n dd over the real line, n = 2, 4, 6, and int W dd, for a
    window of radius ``radius`` (1 inside radius / 2)."""
    half = 0.5 * radius

    def one_minus_w(d):
        return float(_one_minus_window(d, radius))

    out = []
    for n in (2, 4, 6):
        inner = integrate.quad(lambda d: one_minus_w(d) * d**-n, half, radius, epsabs=0, epsrel=1e-12)[0]
        out.append(2.0 * (inner + radius ** (1 - n) / (n - 1)))
    area_w = 2.0 * (half + half - integrate.quad(one_minus_w, half, radius, epsrel=1e-12)[0])
    return tuple(out), area_w


def _kernel_spectra(powers, step, radius, reach, cutoff, taper, far_wing, nfft, outer=None):
    """:func:`_kernel_spectra_of`, remembered: in one cache for every thread, unless ``far_wing``
    holds one layer's parameters; those only in the calling thread's last few (a calculation
    asks for them again when it sums the same layer's lines for another state of the same air,
    in the same task; see :meth:`specforce.radiation.column.Absorbers.layer_depths_together`)."""
    key = (powers, step, radius, reach, cutoff, taper, far_wing, nfft, outer)
    if far_wing is None or not far_wing.layer_specific:
        return _shared_kernel_spectra(*key)
    recent = getattr(_THREAD, "recent", None)
    if recent is None:
        recent = _THREAD.recent = {}
    found = recent.pop(key, None)
    if found is None:
        found = _kernel_spectra_of(*key)
        while len(recent) >= _RECENT:
            recent.pop(next(iter(recent)))
    recent[key] = found  # the newest last
    return found


# Layer-specific kernel spectra each thread keeps: a few, for the lines of one layer (a few MB)
_RECENT = 4
_THREAD = threading.local()


@functools.lru_cache(maxsize=128)
def _kernel_window(step, radius, reach, cutoff, taper, outer):
    """(d, (1 - W_R(d)) W_outer(d) T(d)) at d = k step, 0 <= k <= reach / step: the part of a kernel
    that no far-wing factor changes, shared by the kernels of every layer (read-only arrays)."""
    nk = int(math.ceil(reach / step))
    d = step * np.arange(nk + 1, dtype=float)
    k = _one_minus_window(d, radius)
    if outer is not None:
        k = k * (1.0 - _one_minus_window(d, outer))
    if cutoff is not None:
        if taper > 0:
            k = k * (1.0 - _smoothstep((d - (cutoff - taper)) / taper))
        k = np.where(d < cutoff, k, 0.0)
    d.setflags(write=False)
    k.setflags(write=False)
    return d, k


def _kernel_spectra_of(powers, step, radius, reach, cutoff, taper, far_wing, nfft, outer=None):
    """For each of ``powers``, the real spectrum (:func:`_even_spectra`) of (1 - W_R(|d|)) W_outer(|d|)
    T(|d|) chi(|d|) / |d|^power sampled at d = k step, |k| <= reach / step (power 0: the pedestal
    box; outer None: no W_outer); chi is the factor of ``far_wing`` (a FarWing, or None for none)."""
    d, k = _kernel_window(step, radius, reach, cutoff, taper, outer)
    if far_wing is not None:
        k = k * far_wing.factor(d)
    return _even_spectra(np.array([np.where(d > 0, k / np.where(d > 0, d, 1.0) ** power, 0.0) for power in powers]),
                         nfft)


def _even_spectra(k, nfft):
    """The spectra of even kernels, row r with samples k[r, j] at j and -j (|j| < nfft / 2), on a
    circle of ``nfft`` points: the rfft of each one's circular order, in one transform, and real
    because the kernels are even (the imaginary parts are rounding, below 1e-16 of the largest
    value, and are dropped). A tuple of read-only arrays."""
    rows, nk = k.shape[0], k.shape[1] - 1
    full = np.zeros((-(-rows // _ROW_MULTIPLE) * _ROW_MULTIPLE, nfft))
    full[:rows, : nk + 1] = k
    full[:rows, nfft - nk :] = k[:, 1:][:, ::-1]
    spectra = scipy.fft.rfft(full, axis=-1, workers=1)
    out = tuple(np.ascontiguousarray(spectra[r].real) for r in range(rows))
    for a in out:
        a.setflags(write=False)
    return out


_shared_kernel_spectra = functools.lru_cache(maxsize=48)(_kernel_spectra_of)  # three spectra an entry


@functools.lru_cache(maxsize=32)
def _bump_spectrum(step, nfft):
    """rfft of a Gaussian of unit area and standard deviation 1.5 ``step``, sampled at k step:
    the core of a smooth line. At 1.5 steps per standard deviation its samples integrate to 1
    within 1e-19 and are smooth enough for the tiers' interpolation to keep that area."""
    sigma = 1.5 * step
    nk = int(math.ceil(8 * sigma / step))
    d = step * np.arange(nk + 1, dtype=float)
    k = np.exp(-0.5 * (d / sigma) ** 2) / (sigma * math.sqrt(2 * math.pi))
    return _even_spectra(k[np.newaxis], nfft)[0]
