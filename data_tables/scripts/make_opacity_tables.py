"""Regenerate the molecular and atomic opacity data in data_tables/opacity/.

Outputs
-------
``opacity/bands.ecsv``
    The documented band list: one row per vibrational-rotational or
    electronic band (centre, integrated intensity at 296 K, temperature
    dependence, band width, Malkmus line-spacing and line-width parameters,
    source).  Written from ``BANDS`` below.
``opacity/alkali_lines.ecsv``
    Na and K resonance doublets (wavelength, oscillator strength, broadening,
    far-wing cutoff).  Written from ``ALKALI_LINES`` below.
``cia/cia_bands.ecsv``
    Collision-induced absorption of H2-H2, H2-He, N2-N2, O2-O2 and CO2-CO2 as
    Gaussian band components (centre, width, peak binary coefficient at
    296 K, power-law temperature scaling).  Written from ``CIA_BANDS``.
``opacity/malkmus_bands.npz``
    Per native bin and per table temperature: the mean line absorption
    cross-section S (m^2/molecule), the Malkmus effective line density
    1/delta (m) and the smooth (line-free, electronic continuum)
    cross-section (m^2/molecule), float32, with a JSON provenance string.
    ``snrkit.atmosphere.opacity`` turns these into k-distributions at load
    time from the analytic Malkmus distribution.

Method
------
Band envelopes follow the exponential wide-band model (Edwards & Menard
1964, Appl. Opt. 3, 621; Edwards 1976, Adv. Heat Transfer 12, 115): the
mean line absorption coefficient per unit wavenumber of a symmetric band is
S_b(nu) = (I/omega) exp(-2|nu - nu0| / omega), of a pure-rotation band
(nu0 = 0) S_b(nu) = (I/omega) exp(-nu/omega), with the band width growing as
omega(T) = omega_296 (T/296)^0.5 (Edwards 1976).  omega_296 is set from the
rigid-rotor rms width of the P/R envelope, 2 sqrt(B_rot k T / h c), with
omega = sqrt(2) x rms (derived here from standard rotational constants;
common practice, no source).  Electronic continua (O3 Hartley and Chappuis,
SO2 UV) are Gaussian in wavenumber with a fixed width and carry no line
structure.  Band intensities scale with temperature as
I(T) = I_296 (T/296)^n exp[-c2 E_low (1/T - 1/296)]; n = 0 and E_low = 0
for fundamentals, whose band sum (including hot bands, net of stimulated
emission) is independent of T for a harmonic oscillator (Edwards 1976).

Each native bin's mean is the exact integral of the envelope over the bin
divided by the bin width.  Where several bands of one species overlap, the
effective Malkmus line parameter is chosen so that the combined strong-line
limit equals the product of the bands' transmissions:
sqrt(B_eff S_tot) = sum_b sqrt(B_b S_b) (derived here); the line width is a
property of the species, so this fixes an effective line density 1/d_eff.
At load time B = gamma / d (strong-line matching for exponentially
distributed line strengths, see snrkit/atmosphere/opacity.py).

Run from the repository root: python data_tables/scripts/make_opacity_tables.py
"""

import datetime
import json
from pathlib import Path

import numpy as np
from astropy.table import Table

OUT = Path(__file__).resolve().parents[1] / "opacity"
SCRIPT = "data_tables/scripts/make_opacity_tables.py"

# Native grid: must equal snrkit.atmosphere.opacity (checked at load time).
LAMBDA_MIN_M = 0.3e-6
LAMBDA_MAX_M = 30.0e-6
N_NATIVE = 4606                       # ln(100)/4606 = 1/1000.2 -> R = 1000.2
TEMPERATURES_K = np.array([100., 150., 200., 296., 400., 600., 800., 1000.,
                           1300., 1600., 2000., 2500., 3000.])
C2_CM_K = 1.4387769                   # second radiation constant hc/k [cm K]
KT_HC_296 = 296.0 / C2_CM_K           # kT/hc at 296 K [cm^-1]

HITRAN = "HITRAN2016 band sum (Gordon et al. 2017, JQSRT 203, 3)"
MEM = "value from memory"
ZOU = ("Zou & Varanasi 2002, JQSRT 75, 63 (authors/journal from memory; "
       "1-0 band (1.013 +/- 0.007)e-17, 2-0 band (7.532 +/- 0.066)e-20 cm/molecule)")

# Species-level parameters:
#   rotational constant used for the envelope width [cm^-1] (geometric mean
#   (ABC)^(1/3) for non-linear molecules; Herzberg 1966 / NIST CCCBDB ground-
#   state constants, values from memory),
#   Lorentz HWHM at 1 bar, 296 K [cm^-1] and its T exponent (typical
#   air-broadened HITRAN half-widths, value from memory; H2-broadening is of
#   the same order), Malkmus mean line spacing at 296 K [cm^-1] and its T
#   exponent delta(T) = delta_296 (296/T)^m.  For linear molecules delta_296
#   is the P/R line spacing 2B (4B for CO2, odd J missing); for the others
#   an effective mean spacing of the lines (order of magnitude, cf. the
#   narrow-band Malkmus fits of Soufiani & Taine 1997, Int. J. Heat Mass
#   Transfer 40, 987; value from memory).  m = 0.5 (linear) or 1.0
#   (non-linear): growth of hot-line density with T (common practice, no
#   source).
SPECIES = {
    #        B_rot   gamma  n_gam  delta  m
    "H2O": (15.6, 0.090, 0.75, 0.5, 1.0),
    "CO2": (0.390, 0.070, 0.75, 1.56, 0.5),
    "CH4": (5.24, 0.060, 0.75, 1.0, 1.0),
    "CO": (1.93, 0.060, 0.75, 3.84, 0.5),
    "NH3": (8.2, 0.080, 0.75, 1.0, 1.0),
    "O3": (0.854, 0.070, 0.75, 0.1, 1.0),
    "O2": (1.44, 0.050, 0.75, 2.0, 0.5),
    "N2O": (0.419, 0.075, 0.75, 0.838, 0.5),
    "SO2": (0.585, 0.100, 0.75, 0.1, 1.0),
    "H2S": (7.65, 0.080, 0.75, 0.5, 1.0),
    "HCN": (1.478, 0.100, 0.75, 2.956, 0.5),
}

# Band list.  Columns: species, label, centre [cm^-1], I_296 [cm/molecule],
# shape ("symmetric" | "rotational" | "gaussian"), gaussian FWHM [cm^-1]
# (only for "gaussian"), E_low [cm^-1], n, source.
# Integrated intensities of fundamentals follow the band sums of HITRAN and
# the gas-phase infrared intensities (km/mol; 1 km/mol = 1.6605e-19
# cm/molecule).  The CO 1-0 and 2-0 and the O2 A-band intensities were read
# in the abstracts of the papers named in their rows; all other values are
# from memory, not read in the source while writing this table, and should
# be checked against HITRAN before being
# relied on beyond planning accuracy (~30 % for strong fundamentals, a factor
# ~2-3 for weak overtones, H2S, N2O and the electronic continua).
BANDS = [
    # H2O
    ("H2O", "pure rotation", 0.0, 5.1e-18, "rotational", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu2 6.3 um", 1594.7, 1.05e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "2nu2 3.2 um", 3151.6, 7.5e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu1 2.7 um", 3657.1, 4.9e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu3 2.7 um", 3755.9, 7.2e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu2+nu3 1.9 um", 5331.3, 8.4e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu1+nu3 1.4 um", 7249.8, 7.7e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "nu1+nu2+nu3 1.14 um", 8807.0, 7.0e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "2nu1+nu3 0.94 um", 10613.4, 5.7e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "0.82 um polyad", 12151.3, 4.0e-22, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "3nu1+nu3 0.72 um", 13830.9, 5.0e-22, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "0.65 um polyad", 15347.9, 2.0e-23, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("H2O", "4nu1+nu3 0.59 um", 16898.8, 3.0e-24, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # CO2
    ("CO2", "nu2 15 um", 667.4, 7.9e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "laser band 10.4 um", 960.9, 3.0e-23, "symmetric", 0, 1388.2, 0, f"{HITRAN}; Devi et al. 2003, JQSRT 76, 393; {MEM}"),
    ("CO2", "laser band 9.4 um", 1063.7, 3.0e-23, "symmetric", 0, 1285.4, 0, f"{HITRAN}; Devi et al. 2003, JQSRT 76, 393; {MEM}"),
    ("CO2", "5.2 um combination", 1932.5, 1.2e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "4.8 um combination", 2076.9, 1.5e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "nu3 4.3 um", 2349.1, 9.5e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "Fermi dyad 2.77 um", 3612.8, 6.5e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "Fermi dyad 2.69 um", 3714.8, 1.0e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "2.0 um triad", 5000.0, 1.8e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CO2", "1.6 um bands", 6300.0, 3.3e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # CH4
    ("CH4", "nu4 7.7 um", 1310.76, 5.7e-18, "symmetric", 0, 0, 0, f"centre: band origin as tabulated in A&A 2022, article aa41933-21, Table B.2 (read); intensity {HITRAN}, {MEM}"),
    ("CH4", "nu2 6.5 um", 1533.33, 4.0e-20, "symmetric", 0, 0, 0, f"centre: band origin as tabulated in A&A 2022, article aa41933-21, Table B.2 (read); intensity {HITRAN}, {MEM}"),
    ("CH4", "2nu4 3.8 um", 2600.0, 2.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "nu3 3.3 um", 3018.9, 1.1e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "octad 2.3 um", 4300.0, 6.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "2nu3 1.66 um", 6005.0, 1.7e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "1.38 um", 7500.0, 2.0e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "1.15 um", 8700.0, 1.0e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("CH4", "0.89 um", 11240.0, 1.0e-22, "symmetric", 0, 0, 0, f"Karkoschka 1994, Icarus 111, 174; {MEM}"),
    ("CH4", "0.73 um", 13760.0, 4.0e-23, "symmetric", 0, 0, 0, f"Karkoschka 1994, Icarus 111, 174; {MEM}"),
    ("CH4", "0.62 um", 16150.0, 1.5e-23, "symmetric", 0, 0, 0, f"Karkoschka 1994, Icarus 111, 174; {MEM}"),
    # CO
    ("CO", "1-0 4.7 um", 2143.3, 1.013e-17, "symmetric", 0, 0, 0, f"{ZOU}; intensity read in the abstract (12C16O), centre {MEM}"),
    ("CO", "2-0 2.3 um", 4260.1, 7.532e-20, "symmetric", 0, 0, 0, f"{ZOU}; intensity read in the abstract (12C16O), centre {MEM}"),
    ("CO", "3-0 1.6 um", 6350.4, 4.8e-22, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # NH3
    ("NH3", "rotation-inversion", 0.0, 4.0e-18, "rotational", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("NH3", "nu2 10.5 um", 950.0, 2.3e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("NH3", "nu4 6.1 um", 1626.3, 4.5e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("NH3", "nu1/nu3 3.0 um", 3400.0, 1.3e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("NH3", "nu3+nu4 2.0 um", 5000.0, 2.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("NH3", "1.5 um", 6600.0, 5.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # O3
    ("O3", "nu2 14.3 um", 700.9, 5.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O3", "nu3 9.6 um", 1042.1, 1.36e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O3", "nu1 9.1 um", 1103.1, 6.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O3", "nu1+nu3 4.7 um", 2110.8, 1.0e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O3", "3nu3 3.3 um", 3046.09, 1.0e-19, "symmetric", 0, 0, 0, f"centre: Camy-Peyret et al. 1990, J. Mol. Spectrosc. 141, 134 (read in a citing abstract); intensity {HITRAN}, {MEM}"),
    ("O3", "Chappuis 0.6 um", 16700.0, 2.30e-17, "gaussian", 4500.0, 0, 0, f"Serdyuchenko et al. 2014, Atmos. Meas. Tech. 7, 625 (peak 4.8e-21 cm^2 near 600 nm); {MEM}"),
    ("O3", "Hartley-Huggins tail", 39370.0, 6.53e-14, "gaussian", 5336.0, 0, 0, f"Serdyuchenko et al. 2014, Atmos. Meas. Tech. 7, 625 (peak 1.15e-17 cm^2 at 254 nm, 3.3e-19 at 300 nm); {MEM}"),
    # O2
    ("O2", "a-X 0-0 1.27 um", 7882.4, 3.1e-24, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O2", "A band b-X 0-0 0.76 um", 13122.0, 2.231e-22, "symmetric", 0, 0, 0, "Long et al. 2010, 'O2 A-band line parameters to support atmospheric remote sensing', JQSRT 111, 2021 (journal/page from memory); band-integrated intensity at 296 K read in the abstract; centre value from memory"),
    ("O2", "B band b-X 1-0 0.69 um", 14525.0, 1.5e-23, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("O2", "gamma band b-X 2-0 0.63 um", 15902.0, 6.0e-25, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # N2O
    ("N2O", "nu2 17 um", 588.8, 9.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("N2O", "nu1 7.8 um", 1284.9, 1.1e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("N2O", "nu3 4.5 um", 2223.8, 5.5e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("N2O", "2nu1 3.9 um", 2563.3, 8.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("N2O", "nu1+nu3 2.9 um", 3480.8, 1.0e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    # SO2
    ("SO2", "nu2 19 um", 517.7, 4.0e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("SO2", "nu1 8.7 um", 1151.7, 3.6e-18, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("SO2", "nu3 7.3 um", 1362.1, 3.0e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("SO2", "nu1+nu3 4.0 um", 2499.9, 2.5e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("SO2", "UV 0.29 um", 34480.0, 2.25e-15, "gaussian", 3500.0, 0, 0, f"Vandaele, Hermans & Fally 2009, JQSRT 110, 2115 (peak ~6e-19 cm^2 near 290 nm); {MEM}"),
    # H2S
    ("H2S", "pure rotation", 0.0, 1.0e-18, "rotational", 0, 0, 0, f"{HITRAN}; {MEM}, uncertain factor ~3"),
    ("H2S", "nu2 8.5 um", 1182.6, 3.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}, uncertain factor ~3"),
    ("H2S", "nu1/nu3 3.8 um", 2620.0, 1.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}, uncertain factor ~3"),
    ("H2S", "2.6 um combination", 3790.0, 2.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}, uncertain factor ~3"),
    ("H2S", "1.6 um overtone", 6290.0, 1.0e-21, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}, uncertain factor ~3"),
    # HCN
    ("HCN", "nu2 14 um", 712.0, 1.1e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("HCN", "2nu2 7.1 um", 1411.4, 3.0e-19, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("HCN", "nu3 4.8 um", 2096.8, 2.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("HCN", "nu1 3.0 um", 3311.5, 1.0e-17, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
    ("HCN", "2nu1 1.5 um", 6519.6, 1.0e-20, "symmetric", 0, 0, 0, f"{HITRAN}; {MEM}"),
]

# Na and K resonance doublets.  Vacuum wavelengths and oscillator strengths
# as listed in the NIST Atomic Spectra Database (Kramida et al., NIST ASD),
# values from memory.  Line shape: Voigt (Doppler at T; Lorentz HWHM =
# natural + pressure broadening gamma_1bar (296/T)^0.7 x P/1 bar), cut at
# |nu - nu0| = far_wing_cutoff; the pressure-broadening coefficient is an
# order-of-magnitude van der Waals value for H2/N2 perturbers and the cutoff
# is common practice, no source.
ALKALI_LINES = [
    # species, label, vacuum wavelength [nm], f, A_ki [s^-1], gamma_1bar [cm^-1], n, cutoff [cm^-1]
    ("Na", "D2 3s-3p3/2", 589.158, 0.641, 6.16e7, 0.30, 0.7, 4500.0),
    ("Na", "D1 3s-3p1/2", 589.756, 0.320, 6.14e7, 0.30, 0.7, 4500.0),
    ("K", "D2 4s-4p3/2", 766.701, 0.670, 3.80e7, 0.30, 0.7, 4500.0),
    ("K", "D1 4s-4p1/2", 770.108, 0.332, 3.73e7, 0.30, 0.7, 4500.0),
]
ALKALI_SOURCE = ("NIST Atomic Spectra Database (Kramida, Ralchenko, Reader & NIST ASD "
                 "Team), wavelengths (vacuum), f and A_ki; values from memory")


# Collision-induced absorption, one Gaussian (in wavenumber) per band:
# pair, band, centre [cm^-1], FWHM at 296 K [cm^-1], peak binary absorption
# coefficient at 296 K [cm^5 molecule^-2], peak T exponent a, width T
# exponent b:  K(nu, T) = peak (T/296)^a exp[-4 ln2 (nu - centre)^2 / FWHM(T)^2],
# FWHM(T) = FWHM (T/296)^b.  These are approximate envelopes of the tabulated
# HITRAN CIA data (Richard et al. 2012, JQSRT 113, 1276; Karman et al. 2019,
# Icarus 328, 160) and of the papers named; all numbers are values from
# memory, good to a factor ~2 (H2 pairs, O2-O2 visible) or ~3 (N2-N2,
# CO2-CO2).  Replace with the tabulated data for quantitative work.
CIA_MEM = "value from memory, approximate envelope"
CIA_BANDS = [
    ("H2-H2", "roto-translational", 450.0, 1000.0, 8.0e-46, -0.5, 0.5,
     f"Abel et al. 2011, J. Phys. Chem. A 115, 6805; Richard et al. 2012; {CIA_MEM}"),
    ("H2-H2", "fundamental 2.3 um", 4450.0, 900.0, 1.2e-46, 0.5, 0.5,
     f"Abel et al. 2011, J. Phys. Chem. A 115, 6805; Richard et al. 2012; {CIA_MEM}"),
    ("H2-H2", "first overtone 1.2 um", 8400.0, 1100.0, 3.0e-48, 0.7, 0.5,
     f"Borysow 2002, A&A 390, 779; Richard et al. 2012; {CIA_MEM}"),
    ("H2-H2", "second overtone 0.8 um", 12400.0, 1300.0, 1.5e-49, 0.7, 0.5,
     f"Brodbeck et al. 1999, J. Chem. Phys. 110; {CIA_MEM}"),
    ("H2-He", "roto-translational", 400.0, 1000.0, 3.0e-46, -0.5, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}"),
    ("H2-He", "fundamental 2.3 um", 4300.0, 900.0, 4.0e-47, 0.5, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}"),
    ("H2-He", "first overtone 1.2 um", 8300.0, 1100.0, 1.0e-48, 0.7, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}"),
    ("N2-N2", "roto-translational", 60.0, 160.0, 3.0e-46, -0.5, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}"),
    ("N2-N2", "fundamental 4.3 um", 2330.0, 150.0, 2.0e-46, 0.0, 0.5,
     f"Lafferty et al. 1996, Appl. Opt. 35, 5911; {CIA_MEM}, uncertain factor ~3"),
    ("O2-O2", "fundamental 6.4 um", 1556.0, 200.0, 1.0e-47, 0.0, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}, uncertain factor ~3"),
    ("O2-O2", "a1Dg 1.27 um", 7900.0, 130.0, 4.0e-46, 0.0, 0.5,
     f"Maté et al. 1999, J. Geophys. Res. 104, 30585; {CIA_MEM}"),
    ("O2-O2", "a1Dg(v=1) 1.06 um", 9420.0, 100.0, 1.5e-46, 0.0, 0.5,
     f"Maté et al. 1999, J. Geophys. Res. 104, 30585; {CIA_MEM}"),
    ("O2-O2", "dimol 630 nm", 15870.0, 150.0, 7.0e-47, 0.0, 0.5,
     f"Greenblatt et al. 1990, J. Geophys. Res. 95, 18577; {CIA_MEM}"),
    ("O2-O2", "dimol 577 nm", 17330.0, 190.0, 1.1e-46, 0.0, 0.5,
     f"Greenblatt et al. 1990, J. Geophys. Res. 95, 18577; Sneep et al. 2006, JQSRT 98, 405; {CIA_MEM}"),
    ("O2-O2", "dimol 477 nm", 20960.0, 290.0, 6.3e-47, 0.0, 0.5,
     f"Greenblatt et al. 1990, J. Geophys. Res. 95, 18577; Sneep et al. 2006, JQSRT 98, 405; {CIA_MEM}"),
    ("CO2-CO2", "roto-translational", 60.0, 250.0, 3.0e-45, -0.5, 0.5,
     f"Richard et al. 2012, JQSRT 113, 1276; {CIA_MEM}, uncertain factor ~3"),
    ("CO2-CO2", "Fermi dimer 7.8 um", 1285.0, 100.0, 6.0e-46, 0.0, 0.5,
     f"Karman et al. 2019, Icarus 328, 160; {CIA_MEM}, uncertain factor ~3"),
    ("CO2-CO2", "Fermi dimer 7.2 um", 1388.0, 100.0, 9.0e-46, 0.0, 0.5,
     f"Karman et al. 2019, Icarus 328, 160; {CIA_MEM}, uncertain factor ~3"),
]
CIA_T_RANGE_K = (50.0, 3000.0)


def cia_table():
    t = Table(rows=CIA_BANDS, names=("pair", "band", "centre", "fwhm_296", "peak_296",
                                     "peak_t_exponent", "width_t_exponent", "source"))
    t["centre"].unit = "cm-1"
    t["fwhm_296"].unit = "cm-1"
    t["peak_296"].unit = "cm5"
    t.meta["source"] = ("approximate envelopes of HITRAN CIA (Richard et al. 2012, JQSRT 113, 1276; "
                        "Karman et al. 2019, Icarus 328, 160) and the papers per row; values from memory")
    t.meta["method"] = ("K(nu,T) = peak_296 (T/296)^peak_t_exponent exp[-4 ln2 (nu-centre)^2/FWHM(T)^2], "
                        "FWHM(T) = fwhm_296 (T/296)^width_t_exponent; sum over a pair's bands; "
                        "absorption coefficient alpha = K n1 n2")
    t.meta["units"] = {"centre": "cm-1", "fwhm_296": "cm-1", "peak_296": "cm5 molecule-2"}
    t.meta["temperature_range_K"] = list(CIA_T_RANGE_K)
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = SCRIPT
    return t


def native_edges_m():
    """Native wavelength bin edges [m], log-spaced, 0.3-30 um."""
    return LAMBDA_MIN_M * (LAMBDA_MAX_M / LAMBDA_MIN_M) ** (np.arange(N_NATIVE + 1) / N_NATIVE)


def band_width_296(species):
    """Envelope width omega_296 [cm^-1] from the rigid-rotor rms width."""
    b_rot = SPECIES[species][0]
    return np.sqrt(2.0) * 2.0 * np.sqrt(b_rot * KT_HC_296)


def _cdf_symmetric(x, nu0, omega):
    """Integral of (1/omega) exp(-2|nu-nu0|/omega) from -inf to x."""
    z = 2.0 * (x - nu0) / omega
    return np.where(z < 0, 0.5 * np.exp(np.minimum(z, 0.0)),
                    1.0 - 0.5 * np.exp(-np.maximum(z, 0.0)))


def _cdf_rotational(x, omega):
    """Integral of (1/omega) exp(-nu/omega) from 0 to x (x >= 0)."""
    return 1.0 - np.exp(-np.maximum(x, 0.0) / omega)


def _cdf_gaussian(x, nu0, fwhm):
    from scipy.special import ndtr
    return ndtr((x - nu0) / (fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))))


def band_intensity(row, temperature):
    """I(T) [cm/molecule] for one band row."""
    i296, e_low, n = row["intensity_296"], row["lower_state_energy"], row["intensity_t_exponent"]
    return i296 * (temperature / 296.0) ** n * np.exp(-C2_CM_K * e_low * (1.0 / temperature - 1.0 / 296.0))


def bin_mean(row, temperature, nu_lo, nu_hi):
    """Mean cross-section [cm^2/molecule] of one band over wavenumber bins."""
    if row["shape"] == "gaussian":
        frac = _cdf_gaussian(nu_hi, row["centre"], row["gaussian_fwhm"]) - \
            _cdf_gaussian(nu_lo, row["centre"], row["gaussian_fwhm"])
    else:
        omega = row["width_296"] * (temperature / 296.0) ** row["width_t_exponent"]
        if row["shape"] == "rotational":
            frac = _cdf_rotational(nu_hi, omega) - _cdf_rotational(nu_lo, omega)
        else:
            frac = _cdf_symmetric(nu_hi, row["centre"], omega) - _cdf_symmetric(nu_lo, row["centre"], omega)
    return band_intensity(row, temperature) * frac / (nu_hi - nu_lo)


def band_table():
    t = Table(rows=[b[:8] + (b[8],) for b in BANDS],
              names=("species", "band", "centre", "intensity_296", "shape", "gaussian_fwhm",
                     "lower_state_energy", "intensity_t_exponent", "source"),
              dtype=(str, str, float, float, str, float, float, float, str))
    t["width_296"] = [band_width_296(s) if sh != "gaussian" else 0.0
                      for s, sh in zip(t["species"], t["shape"])]
    t["width_t_exponent"] = [0.5 if sh != "gaussian" else 0.0 for sh in t["shape"]]
    t["line_spacing_296"] = [SPECIES[s][3] for s in t["species"]]
    t["line_spacing_t_exponent"] = [SPECIES[s][4] for s in t["species"]]
    t["lorentz_hwhm_1bar_296"] = [SPECIES[s][1] for s in t["species"]]
    t["lorentz_t_exponent"] = [SPECIES[s][2] for s in t["species"]]
    units = {"centre": "cm-1", "intensity_296": "cm/molecule", "gaussian_fwhm": "cm-1",
             "lower_state_energy": "cm-1", "width_296": "cm-1", "line_spacing_296": "cm-1",
             "lorentz_hwhm_1bar_296": "cm-1"}
    for k, v in units.items():
        t[k].unit = v
    t.meta["source"] = ("band intensities: HITRAN2016 band sums (Gordon et al. 2017, JQSRT 203, 3) "
                        "and the papers named per row; most values from memory (see column source)")
    t.meta["method"] = ("exponential wide-band envelopes (Edwards 1976, Adv. Heat Transfer 12, 115), "
                        "omega(T) = width_296 (T/296)^width_t_exponent; I(T) = intensity_296 "
                        "(T/296)^intensity_t_exponent exp[-c2 E_low (1/T - 1/296)]; gaussian rows are "
                        "line-free electronic continua; Malkmus line spacing delta(T) = "
                        "line_spacing_296 (296/T)^line_spacing_t_exponent; Lorentz HWHM = "
                        "lorentz_hwhm_1bar_296 (P/1 bar) (296/T)^lorentz_t_exponent")
    t.meta["units"] = units
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = SCRIPT
    return t


def alkali_table():
    t = Table(rows=ALKALI_LINES,
              names=("species", "line", "wavelength_vacuum", "oscillator_strength", "einstein_a",
                     "lorentz_hwhm_1bar_296", "lorentz_t_exponent", "far_wing_cutoff"))
    t["wavelength_vacuum"].unit = "nm"
    t["einstein_a"].unit = "s-1"
    t["lorentz_hwhm_1bar_296"].unit = "cm-1"
    t["far_wing_cutoff"].unit = "cm-1"
    t.meta["source"] = ALKALI_SOURCE
    t.meta["method"] = ("Voigt profile: Doppler width at T, Lorentz HWHM = A_ki/(4 pi c) + "
                        "lorentz_hwhm_1bar_296 (P/1 bar)(296/T)^lorentz_t_exponent; integrated "
                        "cross-section pi e^2 f / (m_e c^2) per unit wavenumber; profile set to zero "
                        "beyond far_wing_cutoff (common practice, no source)")
    t.meta["units"] = {"wavelength_vacuum": "nm", "einstein_a": "s-1",
                       "lorentz_hwhm_1bar_296": "cm-1", "far_wing_cutoff": "cm-1"}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = SCRIPT
    return t


def malkmus_arrays(bands):
    """S, 1/delta and smooth cross-sections per species, temperature, bin (SI)."""
    edges = native_edges_m()
    nu_edges = 1e-2 / edges                       # cm^-1, descending
    nu_lo, nu_hi = nu_edges[1:], nu_edges[:-1]
    species = list(SPECIES)
    shape = (len(species), TEMPERATURES_K.size, N_NATIVE)
    s_mean = np.zeros(shape)
    line_density = np.zeros(shape)
    smooth = np.zeros(shape)
    for i, sp in enumerate(species):
        rows = bands[bands["species"] == sp]
        for j, temp in enumerate(TEMPERATURES_K):
            sqrt_sum = np.zeros(N_NATIVE)
            total = np.zeros(N_NATIVE)
            for row in rows:
                m = bin_mean(row, temp, nu_lo, nu_hi)       # cm^2
                if row["shape"] == "gaussian":
                    smooth[i, j] += m
                    continue
                delta = row["line_spacing_296"] * (296.0 / temp) ** row["line_spacing_t_exponent"]
                total += m
                sqrt_sum += np.sqrt(m / delta)              # B is prop. to 1/delta
            s_mean[i, j] = total
            with np.errstate(invalid="ignore", divide="ignore"):
                dens = np.where(total > 0, sqrt_sum ** 2 / np.where(total > 0, total, 1.0), 0.0)
            line_density[i, j] = dens                       # 1/delta_eff [cm]
    # to SI: cm^2 -> m^2; 1/delta [cm] -> [m]
    return species, s_mean * 1e-4, line_density * 1e-2, smooth * 1e-4


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    bands = band_table()
    bands.write(OUT / "bands.ecsv", format="ascii.ecsv", overwrite=True)
    alk = alkali_table()
    alk.write(OUT / "alkali_lines.ecsv", format="ascii.ecsv", overwrite=True)
    (OUT.parent / "cia").mkdir(exist_ok=True)
    cia_table().write(OUT.parent / "cia" / "cia_bands.ecsv", format="ascii.ecsv", overwrite=True)
    species, s_mean, dens, smooth = malkmus_arrays(bands)
    meta = {
        "source": "data_tables/opacity/bands.ecsv (see its per-row sources)",
        "method": ("exact bin integrals of exponential wide-band envelopes; Malkmus random-band "
                   "parameters per native bin: mean line cross-section S and effective line "
                   "density 1/delta with sqrt(B_eff S) = sum_b sqrt(B_b S_b); smooth = line-free "
                   "electronic continua; k-distributions are computed at load time from the "
                   "analytic Malkmus (inverse-Gaussian) distribution"),
        "units": {"wavelength_edges": "m", "temperature": "K", "mean_cross_section": "m2",
                  "line_density": "m (1/line spacing in m-1)", "smooth_cross_section": "m2"},
        "date": datetime.date.today().isoformat(),
        "script": SCRIPT,
        "native_grid": {"lambda_min_m": LAMBDA_MIN_M, "lambda_max_m": LAMBDA_MAX_M,
                        "n_bins": N_NATIVE},
    }
    np.savez_compressed(
        OUT / "malkmus_bands.npz",
        species=np.array(species),
        temperature=TEMPERATURES_K,
        wavelength_edges=native_edges_m(),
        mean_cross_section=s_mean.astype(np.float32),
        line_density=dens.astype(np.float32),
        smooth_cross_section=smooth.astype(np.float32),
        provenance=np.array(json.dumps(meta)),
    )


if __name__ == "__main__":
    main()
