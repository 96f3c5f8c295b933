"""Regenerate data_tables/population/*.ecsv: the ingredients of the synthetic
population generator (snrkit.planning.population).

Tables written
--------------
``dwarf_sequence.ecsv``
    Mean main-sequence dwarf properties F0V-M6V: Teff [K], radius [R_sun],
    mass [M_sun] and absolute magnitudes M_V, M_J, M_H, M_Ks [mag].  Read
    in E. Mamajek's "A Modern Mean Dwarf Stellar Color and Effective
    Temperature Sequence", version 2024.05.15 (file
    EEM_dwarf_UBVIJHK_colors_Teff.txt in the author's public repository
    emamajek/SpectralType), whose content was incorporated into Table 5 of
    Pecaut & Mamajek 2013, ApJS 208, 9; that reference is cited as the file
    asks.  Columns Teff, R_Rsun, Mv, M_J, M_Ks, H-Ks and Msun are copied; M_H =
    M_Ks + (H-Ks).  The file's own note: the masses are "tentative".
``host_mix.ecsv``
    Local number densities of F, G, K and M dwarfs [pc^-3]: 2.3e-3, 4.8e-3,
    1.05e-2 and 5.92e-2, from E. Mamajek, "Fraction of Stars by Spectral
    Type in the Solar Vicinity" (figshare 3206527, 2016; Hipparcos 30 pc for
    F, RECONS 10 pc for M), read in the record's description.
``occurrence_fgk.ecsv``
    Fressin et al. 2013, ApJ 766, 81 (arXiv:1301.0842), the occurrence table
    (Table 2 as the transcription below names it; the paper was not read
    here): mean number of planets per star (published
    in per cent) in 5 size classes (0.8-1.25, 1.25-2, 2-4, 4-6, 6-22
    R_earth) x 11 period bins (0.8-418 d), with 1-sigma uncertainties.  The
    paper itself could not be read here (the stored copies reachable from
    this project end before its tables).  Every cell value and uncertainty
    was checked against an independent public transcription of the table,
    the SAG13 occurrence-rate compilation (github.com/dgarrett622/Occurrence,
    Data/Fressin2013/eta.txt and sigma_p.txt, commit b3135fc1), and agrees
    in all 49 published cells, and the 6 empty cells are the same
    (tests/test_occurrence_sources.py); and against the sentence of the
    paper's abstract that was read (16.5 +/- 3.6 % of FGK stars have at
    least one planet of 0.8-1.25 R_earth with P < 85 d;
    tests/test_population_generate.py).
    The cells the paper leaves empty are filled so that Sun-like hosts have
    temperate small planets (a table without them would give none):

    * Earths (0.8-1.25 R_earth) beyond 85 d and super-Earths (1.25-2 R_earth)
      beyond 145 d (status ``filled_hsu2019``): a rate density flat in
      ln P and ln R, Gamma = d2f / (dlnP dlnR) = 0.26, from Hsu et al. 2019,
      AJ 158, 109 (arXiv:1902.01417), abstract (read): fewer than 0.27
      planets per FGK star of 0.75-1.5 R_earth with P = 237-500 d (84.13th
      percentile), the true rate possibly lower by a factor of about 2.
      The fill takes half the upper limit, 0.135 per star over that bin,
      Gamma = 0.135 / (ln 2 x ln(500/237)); cell rate = Gamma x ln(R1/R0) x
      ln(P1/P0); uncertainty = the rate itself (the factor of 2 either
      way).  The super-Earth cells extend this density from 1.5 to
      2 R_earth (flat in ln R: common practice, no source).  The choice is
      tested against the last published cells of the same size classes
      and the abstract's recommended range Gamma = 0.06-0.76.
    * small Neptunes (2-4 R_earth) at 245-418 d (status ``extended_flat``):
      the published 145-245 d cell's rate density carried flat in ln P
      (common practice, no source), uncertainty scaled alike.
``occurrence_m.ecsv``
    Dressing & Charbonneau 2015, ApJ 807, 45 (arXiv:1501.01623), the
    occurrence grid in period and radius (Figure 12 as the transcription
    below names it): planets per M dwarf
    in 7 radius bins (0.5-4 R_earth, 0.5 wide) x 5 period bins (0.5-200 d),
    with upper 1-sigma uncertainties.  As for the FGK table, the paper could
    not be read here; every cell value and upper uncertainty was checked
    against the same SAG13 compilation's transcription of that figure
    (DressingCharbonneau2015/eta.txt and sigma_p.txt, commit ab607965),
    which agrees in all 28 cells with a value and lacks the same 7 (the 6
    not_published cells and the interior cell interpolated below)
    (tests/test_occurrence_sources.py).  They are also checked against
    the abstract, which was read: for P < 50 d, 0.56 (+0.06 -0.05)
    planets of 1-1.5 R_earth and 0.46 (+0.07 -0.05) of 1.5-2 R_earth per M
    dwarf; 2.5 +/- 0.2 planets of 1-4 R_earth with P < 200 d.  Cells
    without a value carry rate 0 and status "not_published", except the
    interior cell 1.0-1.5 R_earth, 5.5-18.2 d, whose value is missing here
    between neighbours that have one: it is the geometric mean of the
    cells above and below in radius (status "interpolated", not a
    published number).
``planet_classes.ecsv``
    Radius and insolation boundaries of the planet classes, after Kopparapu
    et al. 2018, ApJ 856, 122, Table 1 (radius boundaries as in the paper's
    abstract, arXiv:1802.09602; insolation boundaries value from memory): radius bins
    0.5-1.0-1.75-3.5-6-14.3 R_earth, each with a hot/warm and a warm/cold
    insolation boundary [S_earth].

Run from the repository root:  python data_tables/scripts/make_population_tables.py
"""

import datetime
from pathlib import Path

import numpy as np
from astropy.table import Table

OUT = Path(__file__).resolve().parents[1] / "population"
TODAY = datetime.date.today().isoformat()
SCRIPT = "data_tables/scripts/make_population_tables.py"

#: (SpT, Teff K, R_Rsun, Mv, H-Ks, M_J, M_Ks, Msun), copied from
#: EEM_dwarf_UBVIJHK_colors_Teff.txt version 2024.05.15.
DWARFS = [
    ("F0V", 7220, 1.728, 2.57, 0.045, 1.98, 1.836, 1.60),
    ("F1V", 7020, 1.679, 2.76, 0.047, 2.11, 1.941, 1.50),
    ("F2V", 6820, 1.622, 2.97, 0.050, 2.24, 2.045, 1.43),
    ("F3V", 6750, 1.578, 3.08, 0.051, 2.32, 2.116, 1.41),
    ("F4V", 6670, 1.533, 3.20, 0.052, 2.40, 2.188, 1.38),
    ("F5V", 6550, 1.473, 3.37, 0.054, 2.52, 2.291, 1.32),
    ("F6V", 6350, 1.359, 3.69, 0.057, 2.76, 2.50, 1.25),
    ("F7V", 6280, 1.324, 3.80, 0.060, 2.85, 2.579, 1.21),
    ("F8V", 6180, 1.221, 4.05, 0.061, 3.05, 2.76, 1.16),
    ("F9V", 6050, 1.167, 4.25, 0.063, 3.21, 2.915, 1.12),
    ("F9.5V", 5990, 1.142, 4.35, 0.065, 3.26, 2.947, 1.09),
    ("G0V", 5930, 1.100, 4.48, 0.067, 3.37, 3.043, 1.07),
    ("G1V", 5860, 1.060, 4.62, 0.070, 3.47, 3.120, 1.04),
    ("G2V", 5770, 1.012, 4.80, 0.073, 3.60, 3.236, 1.00),
    ("G3V", 5720, 1.002, 4.87, 0.074, 3.66, 3.282, 0.99),
    ("G4V", 5680, 0.991, 4.93, 0.075, 3.70, 3.319, 0.985),
    ("G5V", 5660, 0.977, 4.98, 0.076, 3.73, 3.345, 0.98),
    ("G6V", 5600, 0.949, 5.10, 0.079, 3.81, 3.409, 0.965),
    ("G7V", 5550, 0.927, 5.20, 0.080, 3.90, 3.495, 0.945),
    ("G8V", 5480, 0.914, 5.30, 0.082, 3.96, 3.532, 0.93),
    ("G9V", 5380, 0.853, 5.55, 0.087, 4.14, 3.693, 0.89),
    ("K0V", 5290, 0.813, 5.78, 0.091, 4.31, 3.827, 0.86),
    ("K1V", 5170, 0.797, 5.95, 0.094, 4.39, 3.889, 0.85),
    ("K2V", 5100, 0.783, 6.07, 0.098, 4.46, 3.938, 0.82),
    ("K3V", 4870, 0.755, 6.53, 0.110, 4.78, 4.100, 0.76),
    ("K4V", 4600, 0.710, 6.99, 0.123, 4.91, 4.247, 0.72),
    ("K5V", 4440, 0.701, 7.28, 0.132, 5.10, 4.397, 0.70),
    ("K6V", 4300, 0.669, 7.64, 0.148, 5.31, 4.56, 0.67),
    ("K7V", 4090, 0.630, 8.20, 0.164, 5.59, 4.81, 0.64),
    ("K8V", 3990, 0.615, 8.43, 0.171, 5.75, 4.95, 0.61),
    ("K9V", 3930, 0.608, 8.56, 0.180, 5.82, 5.01, 0.60),
    ("M0V", 3850, 0.588, 8.80, 0.190, 5.97, 5.15, 0.585),
    ("M0.5V", 3770, 0.544, 9.20, 0.208, 6.19, 5.36, 0.56),
    ("M1V", 3660, 0.501, 9.64, 0.222, 6.48, 5.64, 0.51),
    ("M1.5V", 3620, 0.482, 9.85, 0.227, 6.59, 5.75, 0.485),
    ("M2V", 3560, 0.446, 10.21, 0.234, 6.81, 5.98, 0.45),
    ("M2.5V", 3470, 0.421, 10.61, 0.244, 7.01, 6.18, 0.42),
    ("M3V", 3430, 0.361, 11.15, 0.252, 7.38, 6.55, 0.36),
    ("M3.5V", 3270, 0.300, 12.10, 0.269, 7.93, 7.10, 0.29),
    ("M4V", 3210, 0.274, 12.61, 0.280, 8.20, 7.36, 0.24),
    ("M4.5V", 3110, 0.217, 13.58, 0.301, 8.80, 7.93, 0.18),
    ("M5V", 3060, 0.196, 14.15, 0.312, 9.09, 8.20, 0.155),
    ("M5.5V", 2930, 0.156, 15.30, 0.329, 9.72, 8.80, 0.122),
    ("M6V", 2810, 0.137, 16.32, 0.352, 10.18, 9.22, 0.105),
]

#: class: local number density [pc^-3] (Mamajek 2016, figshare 3206527).
DENSITIES = {"F": 2.3e-3, "G": 4.8e-3, "K": 1.05e-2, "M": 5.92e-2}

# Fressin et al. 2013, occurrence table; cell values checked against the SAG13 compilation's
# transcription (module docstring). "hsu" = empty in the paper, filled from Hsu et al. 2019;
# "flat" = empty in the paper, the left neighbour's density carried flat in ln P.
FRESSIN_RADIUS = [0.8, 1.25, 2.0, 4.0, 6.0, 22.0]
FRESSIN_PERIOD = [0.8, 2.0, 3.4, 5.9, 10.0, 17.0, 29.0, 50.0, 85.0, 145.0, 245.0, 418.0]
# per cent; rows = size classes (small to large)
FRESSIN_RATE = [
    [0.18, 0.61, 1.72, 2.70, 2.70, 2.93, 4.08, 3.46, "hsu", "hsu", "hsu"],
    [0.17, 0.74, 1.49, 2.90, 4.30, 4.49, 5.29, 3.66, 6.54, "hsu", "hsu"],
    [0.035, 0.18, 0.73, 1.93, 3.67, 5.29, 6.45, 5.25, 4.31, 3.09, "flat"],
    [0.004, 0.006, 0.11, 0.091, 0.29, 0.32, 0.49, 0.66, 0.43, 0.53, 0.24],
    [0.015, 0.067, 0.17, 0.18, 0.27, 0.23, 0.35, 0.71, 1.25, 0.94, 1.05],
]
FRESSIN_SIGMA = [
    [0.04, 0.15, 0.43, 0.60, 0.83, 1.05, 1.88, 2.81, None, None, None],
    [0.03, 0.13, 0.23, 0.56, 0.73, 1.0, 1.48, 1.21, 2.20, None, None],
    [0.011, 0.03, 0.09, 0.19, 0.39, 0.64, 1.01, 1.05, 1.03, 0.90, None],
    [0.003, 0.006, 0.03, 0.03, 0.07, 0.08, 0.12, 0.16, 0.17, 0.21, 0.15],
    [0.007, 0.018, 0.03, 0.04, 0.06, 0.06, 0.10, 0.17, 0.29, 0.28, 0.30],
]

#: Hsu et al. 2019, AJ 158, 109, abstract (read): upper limit (84.13th percentile) on the
#: planets per FGK star of HSU_RADIUS [R_earth] and HSU_PERIOD [d]; the true rate may be lower by
#: a factor of about 2, and mission concepts should be robust for Gamma in HSU_GAMMA_RANGE.
HSU_UPPER_LIMIT = 0.27
HSU_RADIUS = (0.75, 1.5)
HSU_PERIOD = (237.0, 500.0)
HSU_GAMMA_RANGE = (0.06, 0.76)
#: The fill takes half the upper limit (the abstract's factor of about 2).
HSU_FILL_FRACTION = 0.5
HSU_GAMMA = (HSU_FILL_FRACTION * HSU_UPPER_LIMIT
             / (np.log(HSU_RADIUS[1] / HSU_RADIUS[0]) * np.log(HSU_PERIOD[1] / HSU_PERIOD[0])))

# Dressing & Charbonneau 2015, occurrence grid (Figure 12); cell values checked against the
# SAG13 compilation's transcription (module docstring).
DC15_RADIUS = [0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0]
DC15_PERIOD = [0.5, 1.7, 5.5, 18.2, 60.3, 200.0]
# per cent; rows = radius bins; None = no value; "interp" = interpolated here (docstring)
DC15_RATE = [
    [1.920, 9.880, 23.06, 17.75, None],
    [1.830, 9.180, "interp", 23.08, 30.70],
    [0.330, 3.700, 20.06, 26.73, 18.90],
    [None, 2.250, 15.69, 23.65, 14.12],
    [None, 1.190, 6.540, 10.42, 5.300],
    [None, 0.580, 2.550, 2.440, 1.830],
    [None, 0.360, 0.870, 0.530, None],
]
DC15_SIGMA = [
    [1.010, 3.450, 8.290, 13.34, None],
    [0.870, 2.620, None, 9.380, 26.67],
    [0.460, 1.820, 5.450, 8.990, 14.67],
    [None, 1.570, 4.910, 8.810, 11.55],
    [None, 1.210, 3.510, 6.680, 7.850],
    [None, 0.910, 2.410, 4.140, 5.320],
    [None, 0.720, 1.650, 2.310, None],
]

#: (label, radius_min, radius_max, hot/warm boundary, warm/cold boundary) [R_earth, S_earth]
#: after Kopparapu et al. 2018, ApJ 856, 122, Table 1 (radius boundaries as in the
#: paper's abstract, arXiv:1802.09602; insolation boundaries value from memory).
PLANET_CLASSES = [
    ("rocky", 0.5, 1.0, 1.0, 0.28),
    ("super-earth", 1.0, 1.75, 1.12, 0.30),
    ("sub-neptune", 1.75, 3.5, 1.15, 0.32),
    ("sub-jovian", 3.5, 6.0, 1.65, 0.45),
    ("jovian", 6.0, 14.3, 1.65, 0.40),
]


def _meta(t, source, method, units):
    t.meta["source"] = source
    t.meta["method"] = method
    t.meta["units"] = units
    t.meta["date"] = TODAY
    t.meta["script"] = SCRIPT


def dwarf_table():
    rows = sorted(DWARFS, key=lambda r: r[1])
    t = Table(rows=rows, names=("spectral_type", "teff", "radius", "abs_mag_V", "h_minus_ks",
                                "abs_mag_J", "abs_mag_Ks", "mass"))
    t["abs_mag_H"] = np.round(t["abs_mag_Ks"] + t["h_minus_ks"], 4)
    t.remove_column("h_minus_ks")
    t["teff"] = t["teff"].astype(float)
    t["spectral_class"] = [s[0] for s in t["spectral_type"]]
    t = t["spectral_type", "spectral_class", "teff", "radius", "mass", "abs_mag_V", "abs_mag_J",
          "abs_mag_H", "abs_mag_Ks"]
    units = {"teff": "K", "radius": "solRad", "mass": "solMass", "abs_mag_V": "mag",
             "abs_mag_J": "mag", "abs_mag_H": "mag", "abs_mag_Ks": "mag"}
    _meta(t, "E. Mamajek, A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence, "
             "version 2024.05.15 (EEM_dwarf_UBVIJHK_colors_Teff.txt, public repository "
             "emamajek/SpectralType); content incorporated into Pecaut & Mamajek 2013, ApJS 208, 9, "
             "Table 5, which is the reference to cite",
          "columns Teff, R_Rsun, Mv, M_J, M_Ks and Msun copied for F0V-M6V; abs_mag_H = M_Ks + "
          "(H-Ks); masses are the source's tentative mean masses", units)
    return t


def mix_table():
    t = Table(rows=list(DENSITIES.items()), names=("spectral_class", "number_density"))
    _meta(t, "E. Mamajek 2016, Fraction of Stars by Spectral Type in the Solar Vicinity, figshare "
             "3206527 (densities from Hipparcos and RECONS volume-limited samples)",
          "local number density of dwarfs by class, read in the record's description",
          {"number_density": "pc-3"})
    return t


def _cell(radius, period, rate, sigma, i, j):
    """(rate, uncertainty, status) of cell (i, j) in per cent; see the module docstring."""
    r, s = rate[i][j], sigma[i][j]
    if r is None:
        return 0.0, 0.0, "not_published"
    if r == "interp":
        return (float(np.sqrt(rate[i - 1][j] * rate[i + 1][j])),
                float(np.sqrt(sigma[i - 1][j] * sigma[i + 1][j])), "interpolated")
    if r == "hsu":
        area = np.log(radius[i + 1] / radius[i]) * np.log(period[j + 1] / period[j])
        fill = 100.0 * HSU_GAMMA * area
        return fill, fill, "filled_hsu2019"
    if r == "flat":
        scale = np.log(period[j + 1] / period[j]) / np.log(period[j] / period[j - 1])
        return rate[i][j - 1] * scale, sigma[i][j - 1] * scale, "extended_flat"
    return r, s, "published"


def _grid(radius, period, rate, sigma, source, method):
    rows = []
    for i in range(len(radius) - 1):
        for j in range(len(period) - 1):
            r, s, status = _cell(radius, period, rate, sigma, i, j)
            rows.append((radius[i], radius[i + 1], period[j], period[j + 1],
                         round(r / 100.0, 7), round(s / 100.0, 7), status))
    t = Table(rows=rows, names=("radius_min", "radius_max", "period_min", "period_max",
                                "planets_per_star", "uncertainty", "status"))
    for c in ("radius_min", "radius_max", "period_min", "period_max"):
        t[c] = t[c].astype(float)
    _meta(t, source, method, {"radius_min": "earthRad", "radius_max": "earthRad",
                              "period_min": "d", "period_max": "d"})
    return t


FGK_SOURCE = (
    "Fressin et al. 2013, ApJ 766, 81 (arXiv:1301.0842), occurrence by size class and period bin "
    "(all Kepler dwarfs, mostly FGK), Table 2 (as named by the transcription below); the paper "
    "was not read here: each of the 49 cells of status published, value and 1-sigma, equals the SAG13 "
    "occurrence-rate compilation's transcription (github.com/dgarrett622/Occurrence, "
    "Data/Fressin2013/eta.txt and sigma_p.txt, commit b3135fc1; checked cell by cell in "
    "tests/test_occurrence_sources.py) and agrees with the abstract's 16.5 +/- 3.6 % of FGK "
    "stars with a 0.8-1.25 R_earth planet within 85 d. Cells "
    "of status filled_hsu2019: Hsu et al. 2019, AJ 158, 109 (arXiv:1902.01417), abstract (read): "
    "< 0.27 planets per FGK star of 0.75-1.5 R_earth with P = 237-500 d (84.13th percentile), "
    "true rate possibly lower by a factor of about 2")
FGK_METHOD = (
    "per cent / 100 = mean planets per star in each cell; uncertainty = the published 1-sigma. "
    "Cells empty in Fressin et al. 2013: Earths beyond 85 d and super-Earths beyond 145 d "
    "(filled_hsu2019) = Gamma x ln(R1/R0) x ln(P1/P0), Gamma = half the Hsu et al. 2019 upper "
    "limit over its bin = 0.135 / (ln 2 x ln(500/237)) = 0.2609 planets per star per ln P per "
    "ln R, flat in ln R up to 2 R_earth (common practice, no source), uncertainty = the rate; "
    "small Neptunes at 245-418 d (extended_flat) = the 145-245 d cell's density carried flat in "
    "ln P (common practice, no source)")
M_SOURCE = (
    "Dressing & Charbonneau 2015, ApJ 807, 45 (arXiv:1501.01623), occurrence grid by radius and "
    "period, Figure 12 (as named by the transcription below); the paper was not read here: "
    "each of the 28 cells of status published, value and upper 1-sigma, equals "
    "the SAG13 occurrence-rate compilation's transcription (github.com/dgarrett622/Occurrence, "
    "DressingCharbonneau2015/eta.txt and sigma_p.txt, commit ab607965; checked cell by cell in "
    "tests/test_occurrence_sources.py), and agrees with the abstract (read): 0.56 planets of "
    "1-1.5 R_earth and 0.46 of 1.5-2 R_earth per M dwarf within 50 d, 2.5 +/- 0.2 of "
    "1-4 R_earth within 200 d")
M_METHOD = (
    "per cent / 100 = mean planets per star; uncertainty = the upper 1-sigma; cells without a "
    "value are 0 (not_published); the cell 1.0-1.5 R_earth x 5.5-18.2 d, which has no value in "
    "the transcription either, is the geometric mean of its radius neighbours (interpolated, not "
    "published)")


def main():
    OUT.mkdir(exist_ok=True)
    dwarf_table().write(OUT / "dwarf_sequence.ecsv", format="ascii.ecsv", overwrite=True)
    mix_table().write(OUT / "host_mix.ecsv", format="ascii.ecsv", overwrite=True)
    _grid(FRESSIN_RADIUS, FRESSIN_PERIOD, FRESSIN_RATE, FRESSIN_SIGMA, FGK_SOURCE,
          FGK_METHOD).write(OUT / "occurrence_fgk.ecsv", format="ascii.ecsv", overwrite=True)
    _grid(DC15_RADIUS, DC15_PERIOD, DC15_RATE, DC15_SIGMA, M_SOURCE, M_METHOD).write(
        OUT / "occurrence_m.ecsv", format="ascii.ecsv", overwrite=True)
    t = Table(rows=PLANET_CLASSES, names=("label", "radius_min", "radius_max",
                                          "insolation_hot_warm", "insolation_warm_cold"))
    _meta(t, "Kopparapu et al. 2018, ApJ 856, 122, Table 1: radius boundaries 0.5, 1.0, 1.75, 3.5, 6.0, 14.3 R_earth as stated in the paper's abstract (arXiv:1802.09602); insolation boundaries value from memory",
          "a planet of radius_min <= R < radius_max is hot above insolation_hot_warm, cold below "
          "insolation_warm_cold, warm between; smaller radii count as rocky, larger as jovian",
          {"radius_min": "earthRad", "radius_max": "earthRad", "insolation_hot_warm": "S_earth",
           "insolation_warm_cold": "S_earth"})
    t.write(OUT / "planet_classes.ecsv", format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
