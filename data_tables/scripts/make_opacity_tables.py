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
``opacity/tabulated_bands.ecsv``
    One row per region of the tabulated narrow-band sources used for H2O,
    CO2, CO and CH4 (wavenumber and temperature range, band centre, the
    rule above the highest temperature, band integral at the lowest
    temperature, source), with the typo replacements, the H2O 1.14 um and
    CH4 choices and the NIST notice in its metadata.
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

H2O, CO2, CO and CH4 (tabulated sources).  Native-bin S and 1/d come from
the narrow-band parameters of NASA SP-3080 (Ludwig, Malkmus, Reardon &
Thomson 1973) and the band models of NIST RADCAL (Grosshandler 1993, NIST
TN 1402), copied with their README (units, validity, NIST notice) into
``opacity/sources/``:

* S/d [cm^-1 atm^-1, per atm cm at 273 K] -> sigma = (S/d) / 2.688256e19 cm^-3;
  the sources are piecewise linear between their 25 (H2O, CH4) or 5 cm^-1
  nodes, as RADCAL interpolates them, and each native bin takes the exact
  mean of that function;
* temperature: linear between table rows (RADCAL's rule); above the highest
  row the values are held (RADCAL clamps likewise); below the lowest row
  (300 K, 290 K for CH4) see ``EDWARDS_SCALING``: the band envelope narrows
  about its centre as sqrt(T) at constant band intensity (Edwards 1976), and
  the CO2 hot bands follow RADCAL's own band-strength laws;
* line density stored = (4/pi) x RADCAL's effective 1/d (README §4.7: the
  Malkmus B that keeps RADCAL's weak- and strong-line limits is
  (4/pi) gamma (1/d); snrkit.atmosphere.opacity forms B = gamma x density);
* four suspected transcription errors (README §9) are replaced by the linear
  interpolation of their wavenumber neighbours (``TYPOS``); the H2O 1.14 um
  band, which the 300-600 K table nearly lacks, takes per bin the larger of
  the table and the band list's row; CH4 uses the measured Brosmer & Tien
  (1985) tables (``CH4_CHOICE``).

Band-list rows replaced by these sources are kept in ``bands.ecsv`` with
model "tabulated" (not used); the other rows of these species add their
envelopes outside the ranges where a source is complete (``COMPLETE_RANGES``).

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
    model, note = [], []
    for sp, band in zip(t["species"], t["band"]):
        if band in REPLACED_ROWS.get(sp, []):
            model.append("tabulated")
            note.append("not used: replaced by the tabulated source of its species "
                        "(tabulated_bands.ecsv); kept for reference")
        elif sp == "H2O" and band == H2O_114_ROW:
            model.append("envelope")
            note.append("used in 7950-9300 cm-1 where larger than the SP-3080 table "
                        "(tabulated_bands.ecsv meta h2o_1.14um), and outside 50-9300 cm-1")
        elif sp in COMPLETE_RANGES:
            model.append("envelope")
            note.append("used outside " + ", ".join(f"{a:g}-{b:g}" for a, b in COMPLETE_RANGES[sp])
                        + " cm-1, where the tabulated source is complete")
        else:
            model.append("envelope")
            note.append("used")
    t["model"] = model
    t["use"] = note
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
                        "lorentz_hwhm_1bar_296 (P/1 bar) (296/T)^lorentz_t_exponent; rows with "
                        "model 'tabulated' are not used: H2O, CO2, CO and CH4 bands come from "
                        "the SP-3080 / RADCAL narrow-band tables in tabulated_bands.ecsv "
                        "(column use says where each envelope row applies)")
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


# --------------------------------------------------------------------------
# Tabulated narrow-band parameters: NASA SP-3080 as tabulated in NIST RADCAL
# --------------------------------------------------------------------------
#
# Source files (copied unchanged from the shared extraction, with its README,
# which carries the NIST notice) in data_tables/opacity/sources/.  Section
# numbers "README §n" refer to that README.
#
# Units (README §2): S/d in cm^-1 atm^-1 per atm cm of path reduced to 273 K,
# so the mean cross-section per molecule is (S/d) / n_ref with
# n_ref = 101325 Pa / (k_B 273 K) = 2.688256e19 cm^-3.
# Line spacing (README §4.7): RADCAL's 1/d is the SP-3080 "effective" value of
# a Goody fit; the Malkmus line parameter that keeps RADCAL's weak- and
# strong-line limits is B = (4/pi) gamma_L (1/d).  snrkit.atmosphere.opacity
# forms B = gamma x line_density, so the tables store
# line_density = (4/pi) (1/d) for these sources.

SOURCES = OUT / "sources"
N_REF_273_CM3 = 2.688256e19            # README §2 (RADCAL uses 273 K)
MALKMUS_FROM_RADCAL = 4.0 / np.pi      # README §4.7
RADCAL = ("NIST RADCAL (Grosshandler 1993, NIST Technical Note 1402), Source/rcal.f90 at "
          "commit abe2a8f1e84e, extracted as data only (data_tables/opacity/sources/README.md)")
SP3080 = ("Ludwig, Malkmus, Reardon & Thomson 1973, Handbook of Infrared Radiation from "
          "Combustion Gases, NASA SP-3080")
EDWARDS_SCALING = (
    "below the source's lowest temperature T0: band envelope compressed self-similarly about the "
    "band centre nu0, S(nu, T) = f(T) (1/s) S(nu0 + (nu - nu0)/s, T0), s = sqrt(T/T0) (band width "
    "proportional to sqrt(T) at constant band intensity: exponential wide-band model, Edwards 1976, "
    "Adv. Heat Transfer 12, 115, the same rule the band list uses); f(T) = 1 for bands from the "
    "ground state (band sum independent of T, Edwards 1976), and the source's own analytic "
    "band-strength law for the CO2 hot bands (README §4.3); the effective 1/d at the mapped "
    "wavenumber is held at its T0 value (common practice, no source)")

# Suspected transcription errors in the source (README §9), replaced by the
# linear interpolation between their wavenumber neighbours at the same
# temperature -- the interpolation RADCAL itself applies between nodes.
# (file, wavenumber, temperature): printed value.
TYPOS = {
    ("h2o", 7600.0, 300.0): 1.85e-2,     # neighbours 2.75e-4 and 1.01e-4
    ("h2o", 2175.0, 300.0): 6.2e-3,      # neighbours 8.8e-4 and 4.8e-4
    ("h2o", 9150.0, 2000.0): 6.71e-3,    # neighbours 7.48e-4 and 5.16e-4
    ("co2_15", 555.0, 1500.0): 1.2e-2,   # neighbours 0.097 and 0.126
}

# H2O 1.14 um (README §9): the 300 K and 600 K tables hold only 1-4 % of the
# band above ~7950 cm^-1.  In 7950-9300 cm^-1 each native bin takes the larger
# of the table and the band list's 1.14 um row (present value, from memory),
# at every temperature; the table wins where its hot bands exceed the row.
H2O_114_RANGE = (7950.0, 9300.0)
H2O_114_ROW = "nu1+nu2+nu3 1.14 um"


def _read_csv(name):
    import csv
    with open(SOURCES / name, newline="") as fh:
        return list(csv.DictReader(fh))


def _grid(rows, value_key, where=lambda r: True):
    """(wavenumbers, temperatures, values[T, nu]) from long-format rows."""
    rows = [r for r in rows if where(r)]
    nu = np.array(sorted({float(r["wavenumber_cm-1"]) for r in rows}))
    temps = np.array(sorted({float(r["temperature_K"]) for r in rows}))
    val = np.full((temps.size, nu.size), np.nan)
    ext = {}
    for r in rows:
        i = np.searchsorted(temps, float(r["temperature_K"]))
        j = np.searchsorted(nu, float(r["wavenumber_cm-1"]))
        v = r[value_key]
        val[i, j] = float(v) if v not in ("", None) else np.nan
        ext[(i, j)] = r
    if np.isnan(val).any() and value_key.startswith("s_over_d"):
        raise ValueError(f"incomplete grid for {value_key}")
    return nu, temps, val


def _fix_typos(tag, nu, temps, sd, log):
    for (t, w, temp), printed in TYPOS.items():
        if t != tag:
            continue
        i, j = int(np.flatnonzero(temps == temp)[0]), int(np.flatnonzero(nu == w)[0])
        if not np.isclose(sd[i, j], printed, rtol=1e-6):
            raise ValueError(f"{tag} {w} {temp}: expected the printed value {printed}")
        sd[i, j] = 0.5 * (sd[i, j - 1] + sd[i, j + 1])
        log.append({"file": tag, "wavenumber_cm-1": w, "temperature_K": temp,
                    "printed": printed, "used": float(sd[i, j]),
                    "rule": "linear interpolation between the wavenumber neighbours"})


def h2o_inv_d(nu, temperature):
    """RADCAL/SP-3080 H2O effective 1/d [cm] (README §4.1), T clamped to 300-2499.99 K."""
    t = np.clip(temperature, 300.0, 2499.99)
    d = -2.294 + 0.3004e-2 * t - 0.366e-6 * temperature ** 2
    return np.exp(0.7941 * np.sin(0.0036 * nu - 8.043) + d)


def co2_15_inv_d(temperature):
    """RADCAL CO2 15 um 1/d [cm] (README §4.2): Lagrange quadratic, T clamped to 300-2399.99 K."""
    t = np.clip(temperature, 300.0, 2399.99)
    x, y = (300.0, 550.0, 830.0), (1.2, 8.0, 30.0)
    out = 0.0
    for i in range(3):
        term = y[i]
        for j in range(3):
            if j != i:
                term = term * (t - x[j]) / (x[i] - x[j])
        out = out + term
    return out


def ch4_inv_d(band, temperature):
    """CH4 1/d [cm] from the Brosmer & Tien (1985) fine-structure parameter a = gamma/d.

    a at an effective pressure of 1 atm (README §4.5) divided by the Lorentz
    half-width snrkit uses for CH4 at 1 atm and the same temperature, so that
    snrkit's gamma x 1/d reproduces a at 1 atm.
    """
    if band == "7.7um":
        a = 0.0243 * (temperature / 273.0) ** 0.8
    else:
        a = 0.00734 * (273.0 / temperature) ** 0.5 * np.exp(1.02 * (temperature / 273.0 - 1.0))
    gamma_1bar, n_gam = SPECIES["CH4"][1], SPECIES["CH4"][2]
    gamma_1atm = gamma_1bar * 1.01325 * (296.0 / temperature) ** n_gam
    return a / gamma_1atm


def co2_10um_factor(temperature):
    """Band-strength law of RADCAL's CO2 10 um hot bands (README §4.3), A(T)/A(300 K)."""
    c2, w1, w2, w3 = 1.4388, 1354.91, 673.0, 2396.49
    wa, wb = w3, 0.5 * (w1 + 2.0 * w2)

    def a(t):
        return ((300.0 / t) * np.exp(c2 * wb * (1.0 / 300.0 - 1.0 / t))
                * (1.0 - np.exp(-c2 * (wa - wb) / t))
                / ((1.0 - np.exp(-c2 * wa / t)) * (1.0 - np.exp(-c2 * wb / t))))
    return a(temperature) / a(300.0)


def co2_20um_factor(temperature):
    """Harmonic-oscillator law of RADCAL's CO2 2.0 um bands (README §4.3), S(T)/S(300 K).

    Strength-weighted over the three bands (0.272, 1.01, 0.426 cm^-2 atm^-1;
    upper levels (041), (121), (201), with wk = 1354.91, 673.0, 2396.49 cm^-1).
    """
    c2, w = 1.4388, (1354.91, 673.0, 2396.49)
    bands = ((0.272, 4860.5, (0, 4, 1)), (1.01, 4983.5, (1, 2, 1)), (0.426, 5109.0, (2, 0, 1)))

    def total(t):
        out = 0.0
        for a300, nu, n in bands:
            prod = np.prod([(1.0 - np.exp(-c2 * wk / t)) ** nk for wk, nk in zip(w, n)])
            out += a300 * (300.0 / t) * (1.0 - np.exp(-c2 * nu / t)) / prod
        return out
    return total(temperature) / total(300.0)


def _interp_rows(temps, values, temperature):
    """Linear interpolation in T between table rows (RADCAL's bilinear rule); T >= temps[0]."""
    t = min(max(float(temperature), temps[0]), temps[-1])
    j = int(np.clip(np.searchsorted(temps, t) - 1, 0, temps.size - 2))
    f = (t - temps[j]) / (temps[j + 1] - temps[j])
    return (1.0 - f) * values[j] + f * values[j + 1]


def load_tabulated_sources():
    """The tabulated regions, each a dict (see TABULATED_REGIONS in the written metadata)."""
    log = []
    regions = []
    # H2O, SP-3080 Table A2-35 as tabulated in RADCAL (README §1, §3, §4.1)
    nu, temps, sd = _grid(_read_csv("h2o_radcal_sp3080.csv"), "s_over_d_cm-1_atm-1_stp273")
    _fix_typos("h2o", nu, temps, sd, log)
    h2o_split = [(50.0, 1000.0, 0.0, "rotation"), (1000.0, 2550.0, 1594.7, "6.3 um"),
                 (2550.0, 4550.0, 3755.9, "2.7 um"), (4550.0, 6050.0, 5331.3, "1.87 um"),
                 (6050.0, 7950.0, 7249.8, "1.38 um"), (7950.0, 9300.0, 8807.0, "1.14 um")]
    for lo, hi, nu0, label in h2o_split:
        sel = (nu >= lo) & (nu <= hi)
        regions.append(dict(
            species="H2O", label=f"H2O {label}", file="h2o_radcal_sp3080.csv", lo=lo, hi=hi,
            centre=nu0, nu=nu[sel], temps=temps, sd=sd[:, sel],
            inv_d=lambda n, t: h2o_inv_d(n, t), factor=lambda t: 1.0,
            source=f"{SP3080}, Table A2-35 (H2O), as tabulated in {RADCAL}",
            hot_limit="held at 2500 K (RADCAL clamps T to 2499.99 K, README §3)"))
    # CO2 15 um, SP-3080 Table A2-28 (README §4.2)
    nu, temps, sd = _grid(_read_csv("co2_radcal_sp3080_15um.csv"), "s_over_d_cm-1_atm-1_stp273")
    _fix_typos("co2_15", nu, temps, sd, log)
    regions.append(dict(
        species="CO2", label="CO2 15 um", file="co2_radcal_sp3080_15um.csv", lo=500.0, hi=880.0,
        centre=667.4, nu=nu, temps=temps, sd=sd, inv_d=lambda n, t: co2_15_inv_d(t) + 0 * n,
        factor=lambda t: 1.0, source=f"{SP3080}, Table A2-28 (CO2 15 um), as tabulated in {RADCAL}",
        hot_limit="held at 2400 K (RADCAL clamps T to 2399.99 K, README §3)"))
    # RADCAL's computed bands (README §4.3-4.5, §6)
    comp = _read_csv("radcal_computed_bands_evaluated.csv")
    computed = [
        ("CO2", "10um", 1000.0, co2_10um_factor,
         "Leckner 1971 rigid-rotator envelopes of the 9.4/10.4 um hot bands per TN 1402"),
        ("CO2", "4.3um", 2349.1, lambda t: 1.0,
         "Malkmus 1963 anharmonic vibrating rotator, nu3 with hot bands"),
        ("CO2", "2.7um", 3660.0, lambda t: 1.0, "Malkmus 1963, Fermi dyad"),
        ("CO2", "2.0um", 4985.0, co2_20um_factor,
         "Leckner 1971 envelopes, strengths of Penner & Varanasi 1964, JQSRT 4, 799"),
        ("CO", "4.7um", 2143.3, lambda t: 1.0,
         "Malkmus & Thomson 1961/62 anharmonic vibrating rotator, fundamental with hot bands"),
        ("CH4", "2.4um", 4300.0, lambda t: 1.0,
         "four combination bands, Vincent-Geisse 1955 strengths, Gray & Penner 1965, JQSRT 5, 611"),
    ]
    for species, band, nu0, factor, model in computed:
        def pick(r, species=species, band=band):
            return r["species"] == species and r["band"] == band
        nu, temps, sd = _grid(comp, "s_over_d_cm-1_atm-1_stp273", pick)
        _, _, invd = _grid(comp, "inv_d_cm", pick)
        regions.append(dict(
            species=species, label=f"{species} {band.replace('um', ' um')}",
            file="radcal_computed_bands_evaluated.csv", lo=float(nu[0]), hi=float(nu[-1]),
            centre=nu0, nu=nu, temps=temps, sd=sd, inv_d_table=np.nan_to_num(invd),
            factor=factor, source=f"{model}; band model of {RADCAL}, evaluated by its own routines "
                                  "(README §6)",
            hot_limit="held at 2500 K (highest evaluated temperature)"))
    # CH4: Brosmer & Tien (1985) measured tables (README §4.5), see CH4_CHOICE
    ch4 = _read_csv("ch4_old_brosmer_tien.csv")
    for band, nu0, lo, hi in (("7.7um", 1310.76, 1125.0, 1500.0), ("3.3um", 3018.9, 2625.0, 3400.0)):
        nu, temps, sd = _grid(ch4, "s_over_d_cm-1_atm-1_stp273", lambda r, b=band: r["band"] == b)
        regions.append(dict(
            species="CH4", label=f"CH4 {band.replace('um', ' um')}",
            file="ch4_old_brosmer_tien.csv", lo=lo, hi=hi, centre=nu0, nu=nu, temps=temps, sd=sd,
            inv_d=lambda n, t, b=band: ch4_inv_d(b, t) + 0 * n, factor=lambda t: 1.0,
            source=("Brosmer & Tien 1985, JQSRT 33, 521 (measured; 290, 600, 850 K), as "
                    f"tabulated in {RADCAL} (arrays SD7/SD3)"),
            hot_limit=("held at 850 K: band sum of a fundamental independent of T (Edwards 1976); "
                       "RADCAL's own linear extrapolation is not used")))
    return regions, log


CH4_CHOICE = (
    "CH4 uses the Brosmer & Tien (1985) measured tables (290/600/850 K), not RADCAL's current "
    "300-1400 K tables: the current tables' provenance is undocumented and their band sums fall "
    "to 0.23x by 1400 K as a line list without hot bands would (README §5, §8, §9), while the "
    "measured set keeps the band sum roughly constant, as the harmonic-oscillator band-sum rule "
    "expects (Edwards 1976).  At 290 K its 7.7 and 3.3 um band sums are 1.02 and 0.92 of the "
    "HITRAN-type values (README §8)")

# Ranges where a tabulated source is the complete absorption of its species
# (measured spectra or SP-3080 tables), so that the band list's remaining rows
# are not added there (their envelopes are cut to zero inside).  The CO2, CO and
# CH4 2.4 um computed bands are band-by-band models: other bands add to them.
COMPLETE_RANGES = {"H2O": [(50.0, 9300.0)], "CH4": [(1125.0, 1500.0), (2625.0, 3400.0)]}

# Band-list rows whose band is represented by a tabulated source.
REPLACED_ROWS = {
    "H2O": ["pure rotation", "nu2 6.3 um", "2nu2 3.2 um", "nu1 2.7 um", "nu3 2.7 um",
            "nu2+nu3 1.9 um", "nu1+nu3 1.4 um"],
    "CO2": ["nu2 15 um", "laser band 10.4 um", "laser band 9.4 um", "nu3 4.3 um",
            "Fermi dyad 2.77 um", "Fermi dyad 2.69 um", "2.0 um triad"],
    "CO": ["1-0 4.7 um"],
    "CH4": ["nu4 7.7 um", "nu3 3.3 um", "octad 2.3 um"],
}


def _cumulative(x, y, e):
    """Integral from x[0] to e of the piecewise-linear function through (x, y), 0 outside."""
    x, y, e = np.asarray(x, float), np.asarray(y, float), np.asarray(e, float)
    h = np.diff(x)
    seg = 0.5 * (y[1:] + y[:-1]) * h
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    i = np.clip(np.searchsorted(x, e, side="right") - 1, 0, x.size - 2)
    t = np.clip(e - x[i], 0.0, h[i])
    out = cum[i] + y[i] * t + (y[i + 1] - y[i]) * t ** 2 / (2.0 * h[i])
    return np.where(e <= x[0], 0.0, np.where(e >= x[-1], cum[-1], out))


def _bin_average(x, y, nu_lo, nu_hi):
    return (_cumulative(x, y, nu_hi) - _cumulative(x, y, nu_lo)) / (nu_hi - nu_lo)


def region_nodes(region, temperature):
    """Node wavenumbers [cm^-1], S/d (STP-273 basis) and effective 1/d [cm] at T.

    At or above the source's lowest temperature: RADCAL's linear interpolation
    between table rows (held at the highest row above it).  Below it: the
    envelope compression of EDWARDS_SCALING.
    """
    temps, nu = region["temps"], region["nu"]
    t0 = float(temps[0])
    t_eval = max(float(temperature), t0)
    sd = _interp_rows(temps, region["sd"], t_eval)
    if "inv_d_table" in region:
        invd = _interp_rows(temps, region["inv_d_table"], t_eval)
    else:
        invd = np.broadcast_to(region["inv_d"](nu, min(t_eval, float(temps[-1]))), nu.shape)
    x = nu.astype(float)
    if temperature < t0:
        s = np.sqrt(float(temperature) / t0)
        x = region["centre"] + s * (x - region["centre"])
        sd = sd * float(region["factor"](float(temperature))) / s
    return x, np.maximum(sd, 0.0), np.asarray(invd, float)


def region_bin_means(region, temperature, nu_lo, nu_hi):
    """Per native bin: mean cross-section [cm^2] and mean sqrt(S x line_density) [cm^0.5... ]."""
    x, sd, invd = region_nodes(region, temperature)
    sigma = sd / N_REF_273_CM3                                     # cm^2 per molecule
    dens = MALKMUS_FROM_RADCAL * invd                              # cm (snrkit's 1/delta)
    m = _bin_average(x, sigma, nu_lo, nu_hi)
    r = _bin_average(x, np.sqrt(sigma * dens), nu_lo, nu_hi)
    return m, r


def _row_window_mean(row, temperature, nu_lo, nu_hi, windows):
    """Mean of a band row's envelope over each bin, counting only the parts outside windows."""
    total = bin_mean(row, temperature, nu_lo, nu_hi)
    for a, b in windows:
        lo, hi = np.maximum(nu_lo, a), np.minimum(nu_hi, b)
        ok = hi > lo
        if np.any(ok):
            inside = np.zeros_like(total)
            inside[ok] = bin_mean(row, temperature, lo[ok], hi[ok]) * (hi[ok] - lo[ok]) \
                / (nu_hi[ok] - nu_lo[ok])
            total = total - inside
    return np.maximum(total, 0.0)


S_FLOOR_CM2 = 1e-41      # cm^2; see malkmus_arrays


def malkmus_arrays(bands, regions=None):
    """S, 1/delta and smooth cross-sections per species, temperature, bin (SI).

    ``regions`` defaults to :func:`load_tabulated_sources`.
    """
    if regions is None:
        regions = load_tabulated_sources()[0]
    edges = native_edges_m()
    nu_edges = 1e-2 / edges                       # cm^-1, descending
    nu_lo, nu_hi = nu_edges[1:], nu_edges[:-1]
    species = list(SPECIES)
    shape = (len(species), TEMPERATURES_K.size, N_NATIVE)
    s_mean = np.zeros(shape)
    line_density = np.zeros(shape)
    smooth = np.zeros(shape)
    for i, sp in enumerate(species):
        rows = bands[(bands["species"] == sp) & (bands["model"] != "tabulated")]
        sp_regions = [r for r in regions if r["species"] == sp]
        windows = COMPLETE_RANGES.get(sp, [])
        for j, temp in enumerate(TEMPERATURES_K):
            sqrt_sum = np.zeros(N_NATIVE)
            total = np.zeros(N_NATIVE)
            m114 = r114 = None
            for reg in sp_regions:
                m, r = region_bin_means(reg, temp, nu_lo, nu_hi)
                if reg["label"] == "H2O 1.14 um":
                    m114, r114 = m, r
                    continue
                total += m
                sqrt_sum += r
            for row in rows:
                delta = row["line_spacing_296"] * (296.0 / temp) ** row["line_spacing_t_exponent"]
                if row["shape"] == "gaussian":
                    smooth[i, j] += bin_mean(row, temp, nu_lo, nu_hi)
                    continue
                m = _row_window_mean(row, temp, nu_lo, nu_hi, windows)     # cm^2
                total += m
                sqrt_sum += np.sqrt(m / delta)              # B is prop. to 1/delta
                if sp == "H2O" and row["band"] == H2O_114_ROW:
                    lo, hi = H2O_114_RANGE
                    inside = _row_window_mean(row, temp, nu_lo, nu_hi, [(0.0, lo), (hi, 1e9)])
                    use_row = inside > m114
                    m114 = np.where(use_row, inside, m114)
                    r114 = np.where(use_row, np.sqrt(inside / delta), r114)
            if m114 is not None:
                total += m114
                sqrt_sum += r114
            # Round-off of bin integrals far out in the wings (and of the compressed
            # envelopes below 300 K) leaves |S| < 1e-41 cm^2 (1e-45 m^2), whose optical
            # depth stays below 1e-14 for any column up to 1e31 molecules m^-2: set to 0.
            negligible = total < S_FLOOR_CM2
            total = np.where(negligible, 0.0, total)
            sqrt_sum = np.where(negligible, 0.0, sqrt_sum)
            s_mean[i, j] = total
            with np.errstate(invalid="ignore", divide="ignore"):
                dens = np.where(total > 0, sqrt_sum ** 2 / np.where(total > 0, total, 1.0), 0.0)
            line_density[i, j] = dens                       # 1/delta_eff [cm]
    # to SI: cm^2 -> m^2; 1/delta [cm] -> [m]
    return species, s_mean * 1e-4, line_density * 1e-2, smooth * 1e-4


def tabulated_table(regions, typo_log):
    """One row per tabulated region: range, temperatures, rules and band integral."""
    rows = []
    for reg in regions:
        x, sd, _ = region_nodes(reg, float(reg["temps"][0]))
        integral = float(np.trapezoid(sd, x)) / N_REF_273_CM3
        rows.append((reg["species"], reg["label"], reg["lo"], reg["hi"], reg["centre"],
                     float(reg["temps"][0]), float(reg["temps"][-1]), integral,
                     f"sources/{reg['file']}", reg["hot_limit"], reg["source"]))
    t = Table(rows=rows, names=("species", "region", "wavenumber_min", "wavenumber_max",
                                "band_centre", "temperature_min", "temperature_max",
                                "band_integral_tmin", "file", "above_temperature_max", "source"))
    units = {"wavenumber_min": "cm-1", "wavenumber_max": "cm-1", "band_centre": "cm-1",
             "temperature_min": "K", "temperature_max": "K", "band_integral_tmin": "cm/molecule"}
    for k, v in units.items():
        t[k].unit = v
    t.meta["source"] = f"{SP3080}; {RADCAL}"
    t.meta["method"] = _tabulated_method()
    t.meta["units"] = units
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = SCRIPT
    t.meta["typo_replacements"] = typo_log
    t.meta["ch4_choice"] = CH4_CHOICE
    t.meta["h2o_1.14um"] = _H2O_114_NOTE
    t.meta["nist_notice"] = nist_notice()
    return t


_H2O_114_NOTE = (
    "the 300 K (and 600 K) SP-3080 H2O table holds only ~1 % (1-4 %) of the 1.14 um band above "
    "~7950 cm^-1 (README §8, §9); in 7950-9300 cm^-1 every native bin takes the larger of the "
    "table and the band list's 'nu1+nu2+nu3 1.14 um' row (its present intensity 7.0e-21 "
    "cm/molecule at 296 K, value from memory, exponential envelope), at every temperature")


def _tabulated_method():
    return ("S/d (cm^-1 atm^-1 per atm cm at 273 K) -> mean cross-section (S/d)/2.688256e19 cm^-3 "
            "(README §2); the source is piecewise linear in wavenumber between its 25 or 5 cm^-1 "
            "nodes (RADCAL's interpolation) and is averaged exactly over each native bin; "
            "temperature: linear between table rows (RADCAL's rule), held at the highest row above "
            "it, and " + EDWARDS_SCALING + "; line density stored = (4/pi) x RADCAL's effective "
            "1/d, so that snrkit's B = gamma x line_density = (4/pi) gamma (1/d) (README §4.7); "
            "1/d: H2O SP-3080 fit (README §4.1), CO2 15 um quadratic in T (§4.2), computed "
            "bands as evaluated (§6), CH4 Brosmer & Tien a = gamma/d at 1 atm over snrkit's CH4 "
            "Lorentz width at 1 atm (§4.5); overlapping contributions in a bin combine as "
            "sqrt(B_eff S_tot) = sum sqrt(B_b S_b)")


def nist_notice():
    """The NIST notice of README §10, read from the copied README (must travel with the data)."""
    text = (SOURCES / "README.md").read_text(encoding="utf-8")
    start = text.index("## 10. NIST notice")
    return text[start:].split("\n", 1)[1].strip()


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    bands = band_table()
    bands.write(OUT / "bands.ecsv", format="ascii.ecsv", overwrite=True)
    alk = alkali_table()
    alk.write(OUT / "alkali_lines.ecsv", format="ascii.ecsv", overwrite=True)
    (OUT.parent / "cia").mkdir(exist_ok=True)
    cia_table().write(OUT.parent / "cia" / "cia_bands.ecsv", format="ascii.ecsv", overwrite=True)
    regions, typo_log = load_tabulated_sources()
    tab = tabulated_table(regions, typo_log)
    tab.write(OUT / "tabulated_bands.ecsv", format="ascii.ecsv", overwrite=True)
    species, s_mean, dens, smooth = malkmus_arrays(bands, regions)
    meta = {
        "source": ("H2O, CO2, CO, CH4: " + SP3080 + " and the band models tabulated in " + RADCAL
                   + " (data_tables/opacity/tabulated_bands.ecsv, files in "
                   "data_tables/opacity/sources/); other species and the bands the tables do not "
                   "cover: data_tables/opacity/bands.ecsv (see its per-row sources)"),
        "method": ("tabulated species: " + _tabulated_method() + ". Band-list rows: exact bin "
                   "integrals of exponential wide-band envelopes. Malkmus random-band "
                   "parameters per native bin: mean line cross-section S and effective line "
                   "density 1/delta with sqrt(B_eff S) = sum_b sqrt(B_b S_b); smooth = line-free "
                   "electronic continua; k-distributions are computed at load time from the "
                   "analytic Malkmus (inverse-Gaussian) distribution"),
        "tabulated_species": sorted({r["species"] for r in regions}),
        "typo_replacements": typo_log,
        "h2o_1.14um": _H2O_114_NOTE,
        "ch4_choice": CH4_CHOICE,
        "nist_notice": nist_notice(),
        "units": {"wavelength_edges": "m", "temperature": "K", "mean_cross_section": "m2",
                  "line_density": ("m (1/line spacing in m-1; for the tabulated species "
                                   "(4/pi) x the source's effective 1/d, so that B = gamma x "
                                   "line_density)"), "smooth_cross_section": "m2"},
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
