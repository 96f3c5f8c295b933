"""Regenerate data_tables/habitable_zone.ecsv: Kopparapu HZ flux limits.

Source: Kopparapu et al. 2014, ApJL 787, L29, Table 1 (1 Earth-mass
planet), coefficients as distributed by the authors with that paper.
S_eff = S_eff_sun + a T + b T^2 + c T^3 + d T^4 with T = Teff - 5780 K,
valid for 2600 K <= Teff <= 7200 K.  S_eff is the stellar flux at the
planet in units of the present solar flux at Earth.

The conservative zone runs from the runaway-greenhouse to the maximum-
greenhouse limit; the optimistic zone from "recent Venus" to "early Mars"
(Kopparapu et al. 2013, ApJ 765, 131, Section 5).

Run from the repository root: python data_tables/scripts/make_habitable_zone_table.py
"""

import datetime
from pathlib import Path

from astropy.table import Table

ROWS = [
    # limit, S_eff_sun, a, b, c, d
    ("recent_venus", 1.776, 2.136e-4, 2.533e-8, -1.332e-11, -3.097e-15),
    ("runaway_greenhouse", 1.107, 1.332e-4, 1.580e-8, -8.308e-12, -1.931e-15),
    ("maximum_greenhouse", 0.356, 6.171e-5, 1.698e-9, -3.198e-12, -5.575e-16),
    ("early_mars", 0.320, 5.547e-5, 1.526e-9, -2.874e-12, -5.011e-16),
]


def main():
    t = Table(rows=ROWS, names=("limit", "seff_sun", "a", "b", "c", "d"))
    t.meta["source"] = "Kopparapu et al. 2014, ApJL 787, L29, Table 1 (1 Earth mass)"
    t.meta["method"] = ("S_eff = seff_sun + a*T + b*T**2 + c*T**3 + d*T**4, "
                        "T = Teff - 5780 K; valid 2600-7200 K")
    t.meta["units"] = {"seff_sun": "solar flux at Earth", "a": "K-1", "b": "K-2",
                       "c": "K-3", "d": "K-4"}
    t.meta["teff_range_K"] = [2600.0, 7200.0]
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_habitable_zone_table.py"
    out = Path(__file__).resolve().parents[1] / "habitable_zone.ecsv"
    t.write(out, format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
