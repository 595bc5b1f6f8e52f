"""Physical constants in cgs, taken once from astropy.constants.

Inside the package every hot path works on plain float arrays in these units;
astropy Quantity appears only at the public boundaries.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np

__all__ = [
    "G", "K_B", "M_H", "M_SUN", "M_JUP", "AU", "YR", "PC",
    "MU_GAS", "MU_H2", "M_ION_AMU", "SIGMA_W_IN", "HELIUM_FACTOR", "OHM_COEFF",
    "CR_ION_COEFF",
]

G: float = const.G.cgs.value                     # cm^3 g^-1 s^-2
K_B: float = const.k_B.cgs.value                 # erg K^-1
#: mass of a hydrogen atom, standard atomic weight 1.00784 u (IUPAC)
M_H: float = (1.00784 * u.u).to_value(u.g)
M_SUN: float = const.M_sun.cgs.value             # IAU 2015 nominal, g
M_JUP: float = const.M_jup.cgs.value             # IAU 2015 nominal, g
AU: float = const.au.cgs.value                   # cm
PC: float = const.pc.cgs.value                   # cm
YR: float = (1.0 * u.yr).to_value(u.s)           # Julian year, s

#: mean mass per free particle (H2 + He) for the sound speed
MU_GAS: float = 2.33
#: mean mass per H2 molecule, to turn an H2 column density into a surface density
MU_H2: float = 2.8
#: ion mass in atomic mass units (HCO+)
M_ION_AMU: float = 29.0
#: ion-neutral momentum-transfer rate coefficient for HCO+ - H2, cm^3 s^-1 (from memory)
SIGMA_W_IN: float = 1.69e-9
#: enhancement of the neutral-ion collision time for helium (from memory)
HELIUM_FACTOR: float = 1.4
#: Ohmic diffusivity eta_O = OHM_COEFF * sqrt(T/K) / x_e  cm^2 s^-1 (electron-neutral
#: collisions; the published, rounded 234: c^2 m_e <sigma v>_e / (4 pi e^2) with
#: <sigma v>_e = 8.28e-9 (T/100 K)^1/2 cm^3 s^-1 gives 233.82 with CODATA 2018 constants)
OHM_COEFF: float = 234.0
#: cosmic-ray ionization equilibrium rho_i = C sqrt(rho_n), C in g^1/2 cm^-3/2,
#: for zeta = 1e-17 s^-1 (from memory)
CR_ION_COEFF: float = 3e-16

# keep numpy in the namespace check quiet
_ = np
