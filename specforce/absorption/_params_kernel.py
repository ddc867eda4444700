"""Private numba kernel: a layer's line parameters in one pass over the lines. Not API.

Public code calls :func:`specforce.absorption.linesum.layer_lines`. The kernel evaluates, line by
line, the formulas of :mod:`specforce.molecular.lineparams` (intensity at T, Rothman et al. 1998
Eq. A11; Lorentz width, Eq. A12; pressure shift, Eq. A13; Doppler width, Eq. A4) and the
radiation term of :func:`specforce.absorption.lineshapes.radiation_term`, as numpy evaluates them
there, but without a temporary array per operation and per isotopologue: those took about an
eighth of a calculation and held the interpreter lock throughout (tests/test_absorption.py checks
it against the numpy functions).
"""

import math

import numba as nb
import numpy as np

from .._fastmath import FASTMATH, exp_neg_into
from ..cache import keep_compiled_kernels
from ..constants import REFERENCE_PRESSURE, REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K

keep_compiled_kernels()  # before the kernels are decorated

_C2 = SECOND_RADIATION_CONSTANT_CM_K
_PEAK_DOPPLER = math.sqrt(math.log(2.0) / math.pi)


@nb.njit(cache=True, inline="always", fastmath=FASTMATH)
def _one_minus_exp_neg(x, e):
    """1 - exp(-x) for x >= 0 given e = exp(-x): its Taylor series below 0.1 (where the difference
    would lose digits; truncated at x^12 / 12!, below 1e-22 relative), else 1 - e."""
    if x >= 0.1:
        return 1.0 - e
    return x * (1.0 - x * (1.0 / 2.0 - x * (1.0 / 6.0 - x * (1.0 / 24.0 - x * (1.0 / 120.0 - x * (
        1.0 / 720.0 - x * (1.0 / 5040.0 - x * (1.0 / 40320.0 - x * (1.0 / 362880.0 - x * (
            1.0 / 3628800.0 - x * (1.0 / 39916800.0 - x / 479001600.0)))))))))))


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH, error_model="numpy")
def layer_parameters(wavenumber, intensity, lower_energy, gamma_air, gamma_self, n_air, delta_air, which, ratio,
                     doppler_factor, pressure, temperature, partial_pressure, column, radiation_term):
    """Each line's (shifted centre, strength times column, Doppler and Lorentz half-widths, optical
    depth at centre) at the layer's ``pressure`` [Pa] and ``temperature`` [K], and whether the
    centres are in order (non-decreasing; the pressure shifts can reorder neighbours; the line
    store's checks keep NaN out, which these fast-math flags do not handle).

    ``which`` is each line's index into the per-isotopologue ``ratio`` (Q(296 K) / Q(T)) and
    ``doppler_factor`` (the Doppler half-width at 1 cm-1, so that alpha_D = nu times it);
    ``partial_pressure`` [Pa] and ``column`` [molecule cm-2] are per line. A lower-state energy
    below zero (the placeholder -1) counts as 0. With ``radiation_term`` the strength is divided
    by the radiation term at the line position, and the centre's optical depth multiplied by it at
    the shifted centre. Every exponential goes through the vectorisable exp of
    :mod:`specforce._fastmath` (tanh(u) = (1 - exp(-2u)) / (1 + exp(-2u)), a^n = exp(n ln a)).
    """
    n = wavenumber.shape[0]
    centre = np.empty(n)
    strength = np.empty(n)
    alpha = np.empty(n)
    gamma = np.empty(n)
    peak_tau = np.empty(n)
    t = temperature
    p_atm = pressure / REFERENCE_PRESSURE
    log_scale = math.log(REFERENCE_TEMPERATURE / t)
    # arguments of exp(-u), five per line: stimulated emission at T (also the radiation term at the
    # position: tanh(c2 nu / 2T)) and at 296 K, the Boltzmann factor, the width's temperature
    # scaling, and the radiation term at the shifted centre
    u = np.empty((5, n))
    e = np.empty((5, n))
    kbits = np.empty(n, np.int64)
    scale = kbits.view(np.float64)
    ordered = True
    for j in range(n):
        nu = wavenumber[j]
        c = nu + float(delta_air[j]) * p_atm
        centre[j] = c
        if j > 0 and c < centre[j - 1]:
            ordered = False
        u[0, j] = _C2 * nu / t
        u[1, j] = _C2 * nu / REFERENCE_TEMPERATURE
        u[2, j] = _C2 * max(lower_energy[j], 0.0) * (1.0 / t - 1.0 / REFERENCE_TEMPERATURE)
        u[3, j] = -float(n_air[j]) * log_scale
        u[4, j] = _C2 * c / t
    for r in range(5):
        exp_neg_into(u[r], n, e[r], kbits, scale)
    for j in range(n):
        nu = wavenumber[j]
        k = which[j]
        stim = _one_minus_exp_neg(u[0, j], e[0, j]) / _one_minus_exp_neg(u[1, j], e[1, j])
        s = intensity[j] * ratio[k] * e[2, j] * stim
        if radiation_term:
            s = s / (nu * (_one_minus_exp_neg(u[0, j], e[0, j]) / (1.0 + e[0, j])))
        ps_atm = partial_pressure[j] / REFERENCE_PRESSURE
        a = nu * doppler_factor[k]
        g = e[3, j] * (float(gamma_air[j]) * (p_atm - ps_atm) + float(gamma_self[j]) * ps_atm)
        peak = min(_PEAK_DOPPLER / a, 1.0 / (math.pi * max(g, 1e-30)))
        r0 = centre[j] * (_one_minus_exp_neg(u[4, j], e[4, j]) / (1.0 + e[4, j])) if radiation_term else 1.0
        alpha[j] = a
        gamma[j] = g
        peak_tau[j] = s * r0 * peak * column[j]
        strength[j] = s * column[j]
    return centre, strength, alpha, gamma, peak_tau, ordered


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH, error_model="numpy")
def clip_times_radiation_term(out, x, temperature, radiation_term):
    """out = max(out, 0), times x tanh(c2 x / 2T) at the wavenumbers ``x`` [cm-1] with
    ``radiation_term`` (:func:`specforce.absorption.lineshapes.radiation_term`, through the
    vectorisable exp as in :func:`layer_parameters`), in place."""
    n = out.shape[0]
    if not radiation_term:
        for i in range(n):
            out[i] = max(out[i], 0.0)
        return
    u = np.empty(n)
    e = np.empty(n)
    kbits = np.empty(n, np.int64)
    for i in range(n):
        u[i] = _C2 * x[i] / temperature
    exp_neg_into(u, n, e, kbits, kbits.view(np.float64))
    for i in range(n):
        out[i] = max(out[i], 0.0) * (x[i] * (_one_minus_exp_neg(u[i], e[i]) / (1.0 + e[i])))
