"""Physical constants in SI, taken once from :mod:`astropy.constants`.

astropy's default constant set is CODATA 2018 with the IAU 2015 nominal
solar and planetary values (Prša et al. 2016, AJ 152, 41), which is what the
compute layer of snrkit uses throughout.  Values are plain floats so the
numpy compute functions carry no Quantity overhead.
"""

import astropy.constants as _c
import astropy.units as _u

__all__ = [
    "G", "K_B", "M_U", "H_PLANCK", "C_LIGHT", "SIGMA_SB", "N_A",
    "R_SUN", "M_SUN", "GM_SUN", "L_SUN", "R_EARTH", "M_EARTH", "GM_EARTH",
    "R_JUP", "M_JUP", "AU", "PC", "DAY", "HOUR", "BAR",
]

G = _c.G.si.value                 #: Newtonian constant of gravitation [m3 kg-1 s-2]
K_B = _c.k_B.si.value             #: Boltzmann constant [J K-1]
M_U = _c.u.si.value               #: atomic mass constant [kg]
H_PLANCK = _c.h.si.value          #: Planck constant [J s]
C_LIGHT = _c.c.si.value           #: speed of light [m s-1]
SIGMA_SB = _c.sigma_sb.si.value   #: Stefan-Boltzmann constant [W m-2 K-4]
N_A = _c.N_A.si.value             #: Avogadro constant [mol-1]

R_SUN = _c.R_sun.si.value         #: IAU 2015 nominal solar radius [m]
GM_SUN = _c.GM_sun.si.value       #: IAU 2015 nominal solar mass parameter [m3 s-2]
M_SUN = _c.M_sun.si.value         #: solar mass [kg]
L_SUN = _c.L_sun.si.value         #: IAU 2015 nominal solar luminosity [W]
R_EARTH = _c.R_earth.si.value     #: IAU 2015 nominal equatorial Earth radius [m]
GM_EARTH = _c.GM_earth.si.value   #: IAU 2015 nominal terrestrial mass parameter [m3 s-2]
M_EARTH = _c.M_earth.si.value     #: Earth mass [kg]
R_JUP = _c.R_jup.si.value         #: IAU 2015 nominal equatorial Jupiter radius [m]
M_JUP = _c.M_jup.si.value         #: Jupiter mass [kg]
AU = _c.au.si.value               #: astronomical unit (IAU 2012 B2) [m]
PC = _c.pc.si.value               #: parsec [m]
DAY = 86400.0                     #: day [s]
HOUR = 3600.0                     #: hour [s]
BAR = (1.0 * _u.bar).si.value     #: bar [Pa]
