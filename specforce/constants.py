"""Physical constants in SI units, and the spectroscopic conventions of the trade.

Exact constants are the defining constants of the 2019 SI, as tabulated in
CODATA 2018 [1]_. Derived constants are computed here from those, never
retyped, so that they stay consistent. Wavenumber quantities are the one
exception to SI: they are in cm-1, and ``SECOND_RADIATION_CONSTANT_CM_K`` is in
cm K so that ``c2 * wavenumber / T`` is dimensionless with wavenumber in cm-1.

References
----------
.. [1] Tiesinga, E., Mohr, P. J., Newell, D. B. and Taylor, B. N. (2021),
   CODATA recommended values of the fundamental physical constants: 2018,
   Rev. Mod. Phys. 93, 025010, doi:10.1103/RevModPhys.93.025010.
.. [2] Rothman, L. S. et al. (2005), The HITRAN 2004 molecular spectroscopic
   database, JQSRT 96, 139-204, doi:10.1016/j.jqsrt.2004.10.008 (reference
   conditions of the 160-character line record: 296 K and 1 atm).
.. [3] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562 (standard gravity).
"""

import math

# --- Defining constants of the SI (exact; CODATA 2018 [1]) -------------------
PLANCK = 6.62607015e-34  # h [J s]
BOLTZMANN = 1.380649e-23  # k [J K-1]
SPEED_OF_LIGHT = 299792458.0  # c [m s-1]
AVOGADRO = 6.02214076e23  # N_A [mol-1]

# --- Derived constants -------------------------------------------------------
GAS_CONSTANT = AVOGADRO * BOLTZMANN  # R [J mol-1 K-1]
#: Stefan-Boltzmann constant sigma = 2 pi^5 k^4 / (15 h^3 c^2) [W m-2 K-4]
STEFAN_BOLTZMANN = 2.0 * math.pi**5 * BOLTZMANN**4 / (15.0 * PLANCK**3 * SPEED_OF_LIGHT**2)
#: First radiation constant for spectral radiance, c1L = 2 h c^2 [W m2 sr-1]
FIRST_RADIATION_CONSTANT_L = 2.0 * PLANCK * SPEED_OF_LIGHT**2
#: Second radiation constant c2 = h c / k [m K]
SECOND_RADIATION_CONSTANT = PLANCK * SPEED_OF_LIGHT / BOLTZMANN
#: Second radiation constant in the trade's units [cm K]
SECOND_RADIATION_CONSTANT_CM_K = SECOND_RADIATION_CONSTANT * 100.0
#: Atomic mass constant m_u = 1 g mol-1 / N_A [kg]; the 2019 SI makes M_u
#: equal to 1 g/mol within 1e-9, which is far below anything used here.
ATOMIC_MASS_UNIT = 1.0e-3 / AVOGADRO

# --- Conventions of the line-record format (Rothman et al. 2005 [2]) --------
REFERENCE_TEMPERATURE = 296.0  # T_ref [K]
STANDARD_ATMOSPHERE = 101325.0  # 1 atm [Pa]
REFERENCE_PRESSURE = STANDARD_ATMOSPHERE  # p_ref [Pa]

# --- Earth ---------------------------------------------------------------------
STANDARD_GRAVITY = 9.80665  # g0 [m s-2], exact by convention [3]
#: Molar mass of dry air [kg mol-1], M0 of the U.S. Standard Atmosphere 1976 [3].
DRY_AIR_MOLAR_MASS = 0.0289644
#: Molar mass of water [kg mol-1] (H2O with natural isotopes; IUPAC atomic weights).
WATER_MOLAR_MASS = 0.01801528
#: Specific heat at constant pressure of dry air [J kg-1 K-1] (Emanuel 1994, Atmospheric
#: Convection, Oxford University Press, table of constants; from memory).
CP_DRY_AIR = 1005.7
#: Specific heat at constant pressure of water vapour [J kg-1 K-1] (same source, from memory).
CP_WATER_VAPOUR = 1870.0
