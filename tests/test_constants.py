"""Constants against CODATA as packaged by scipy.constants (a general reference library)."""

import math

import scipy.constants as sc

from specforce import constants as C


def test_exact_si_constants_match_codata():
    # CODATA 2018 (Tiesinga et al. 2021): h, k, c, N_A are exact in the 2019 SI.
    assert C.PLANCK == sc.h
    assert C.BOLTZMANN == sc.k
    assert C.SPEED_OF_LIGHT == sc.c
    assert C.AVOGADRO == sc.N_A


def test_derived_constants():
    # Stefan-Boltzmann: scipy.constants.Stefan_Boltzmann (CODATA); derived here from h, k, c.
    assert math.isclose(C.STEFAN_BOLTZMANN, sc.Stefan_Boltzmann, rel_tol=1e-12)
    # c2 = hc/k = 1.438776877e-2 m K (CODATA 2018 second radiation constant).
    assert math.isclose(C.SECOND_RADIATION_CONSTANT, 1.438776877e-2, rel_tol=1e-9)
    assert math.isclose(C.SECOND_RADIATION_CONSTANT_CM_K, 1.438776877, rel_tol=1e-9)
    assert math.isclose(C.GAS_CONSTANT, sc.R, rel_tol=1e-12)
