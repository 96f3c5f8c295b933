"""Regenerate data_tables/mass_radius.ecsv: the mass-radius relation used for
planets without a measured mass.

Source of the power laws: Chen & Kipping 2017, ApJ 834, 17, in the form used
by Kempton et al. 2018, PASP 130, 114401, Section 3.1 (eq. 2):
M = 0.9718 R^3.58 for R < 1.23 R_earth and M = 1.436 R^1.70 for
1.23 <= R < 14.26 R_earth (M in M_earth, R in R_earth).

The intrinsic scatter of radius at fixed mass is the Chen & Kipping 2017
Table 1 value for each regime (sigma of log10 R: Terran 0.0403, Neptunian
0.146) -- value from memory; it is converted to a scatter of log10 M at
fixed R by dividing by the regime's power-law exponent of R(M)
(0.279 and 0.589 = 1/3.58 and 1/1.70).

Run from the repository root: python data_tables/scripts/make_mass_radius_table.py
"""

import datetime
from pathlib import Path

from astropy.table import Table

ROWS = [
    # regime, r_min, r_max, coefficient, exponent, sigma_log10_r
    ("terran", 0.0, 1.23, 0.9718, 3.58, 0.0403),
    ("neptunian", 1.23, 14.26, 1.436, 1.70, 0.146),
]


def main():
    t = Table(rows=ROWS, names=("regime", "radius_min", "radius_max", "coefficient",
                                "exponent", "sigma_log10_radius"))
    t["radius_min"].unit = "earthRad"
    t["radius_max"].unit = "earthRad"
    t["sigma_log10_mass"] = [round(s * e, 4) for s, e in zip(t["sigma_log10_radius"], t["exponent"])]
    t.meta["source"] = ("Chen & Kipping 2017, ApJ 834, 17, as used by Kempton et al. 2018, "
                        "PASP 130, 114401, eq. 2; scatter: Chen & Kipping 2017 Table 1 "
                        "(value from memory)")
    t.meta["method"] = ("M/M_earth = coefficient * (R/R_earth)**exponent for radius_min <= R < "
                        "radius_max; sigma_log10_mass = sigma_log10_radius * exponent")
    t.meta["units"] = {"radius_min": "earthRad", "radius_max": "earthRad",
                       "sigma_log10_radius": "dex", "sigma_log10_mass": "dex"}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_mass_radius_table.py"
    out = Path(__file__).resolve().parents[1] / "mass_radius.ecsv"
    t.write(out, format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
