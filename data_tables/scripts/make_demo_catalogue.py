"""Regenerate data_tables/demo/catalogue.ecsv: an invented catalogue of transiting planets.

Every star and planet in it is made up (names "Demo-NNNN" and "Demo-NNNN b"),
drawn with a fixed random seed (:data:`SEED`) so the file is reproducible.
It is written in snrkit's default catalogue layout (see the docstring of
``snrkit/planning/mapping.py``), with the units in the column metadata.

Method
------
Hosts.  Spectral class F, G, K or M (probabilities :data:`CLASS_WEIGHTS`),
Teff uniform within the class's range (:data:`TEFF_RANGES`).  Radius, mass,
absolute V magnitude and the colours V-Ks, J-H and H-Ks are interpolated
linearly in Teff in the main-sequence table :data:`DWARF_SEQUENCE`, whose
anchor values are taken from the mean dwarf sequence of Pecaut & Mamajek
2013 (ApJS 208, 9, Table 5, and its online update) -- values from memory,
rounded; good enough for an invented demo, not a reference.  Radius and mass
get a log-normal scatter of 0.03 and 0.02 dex.  Apparent magnitudes are
m = M_abs + 5 log10(d / 10 pc) with no extinction (common practice for
nearby stars, no source), where M_Ks = M_V - (V-Ks), M_H = M_Ks + (H-Ks),
M_J = M_H + (J-H).  Distances are log-uniform in a class-dependent range,
sky positions uniform on the sphere (RA uniform, sin Dec uniform).  Metallicity
is normal with mean 0 and sigma 0.2 dex.  15 % of hosts give log g
(cgs, log10 of G M / R^2) instead of a mass.

Planets.  One to three per host, each from a class (hot giant, warm giant,
Neptune, sub-Neptune, rocky, temperate rocky; FGK and M hosts have different
class weights, :data:`PLANET_CLASSES`; M dwarfs get no giants).  Radius uniform and period
log-uniform in the class's range; temperate rocky planets have an
insolation uniform in 0.3-1.6 S_earth, a = sqrt(L/L_sun / S) au and P from
Kepler's third law.  Masses of giants are log-uniform, 90-1500 M_earth
for hot and 30-1000 M_earth for warm giants (always given, since radius does
not fix a giant's mass); smaller planets' masses follow the
Chen & Kipping 2017 (ApJ 834, 17) power laws as quoted by Kempton et al.
2018 (PASP 130, 114401, eq. 2) with 0.15 dex scatter, and 30 % of them are
left blank (to be estimated by snrkit).  Semi-major axes are computed with
Kepler's third law (G (M_star + M_planet) P^2 / 4 pi^2)^(1/3) with the IAU
2015 constants of astropy, and given for half the planets.  Orbits with
P < 5 d are circular (eccentricity blank or 0); longer ones have a
Rayleigh eccentricity (sigma 0.08, at most 0.5) and a uniform argument of
periastron.  The impact parameter is uniform in [0, min(0.85, 1 - Rp/Rs -
0.02)] (two planets are set grazing on purpose), and is given as b (55 %),
as an inclination from Winn 2010 eq. 7 (35 %) or not at all (10 %).
Ephemerides: T0 (BJD_TDB) within 2459000-2460500 with a 1-sigma uncertainty
log-uniform in 0.4-4 min, and a period uncertainty log-uniform in
3e-7-1e-4 d.

Deliberately bad rows (:data:`BAD_ROWS`, also listed in the table's
``bad_rows`` metadata with the status snrkit must give them): a missing
radius, a negative period, a duplicate planet name, a Teff of 1500 K
(outside snrkit's range), an impact parameter of 1.8 (no transit), an
eccentricity of 1.3, a 16 R_earth planet with no mass (beyond the
mass-radius relation), a row with neither period nor semi-major axis, and a
stellar radius of 0.

Run from the repository root:  python data_tables/scripts/make_demo_catalogue.py
"""

import datetime
from pathlib import Path

import numpy as np
import astropy.constants as const
from astropy.table import Table, MaskedColumn

SEED = 20240611
N_HOSTS = 170

G = const.G.si.value
R_SUN, M_SUN, L_SUN = const.R_sun.si.value, const.M_sun.si.value, const.L_sun.si.value
R_EARTH, M_EARTH = const.R_earth.si.value, const.M_earth.si.value
AU, DAY = const.au.si.value, 86400.0
SIGMA_SB = const.sigma_sb.si.value

#: Mean main-sequence dwarf sequence (Pecaut & Mamajek 2013, ApJS 208, 9,
#: Table 5 and online update; values from memory, rounded):
#: (Teff [K], R [R_sun], M [M_sun], M_V [mag], V-Ks, J-H, H-Ks)  SpT
DWARF_SEQUENCE = np.array([
    (2850.0, 0.141, 0.102, 16.60, 6.47, 0.58, 0.33),   # M6V
    (3210.0, 0.274, 0.230, 12.80, 5.00, 0.56, 0.27),   # M4V
    (3560.0, 0.446, 0.440, 10.30, 4.14, 0.60, 0.22),   # M2V
    (3850.0, 0.588, 0.570, 8.91, 3.65, 0.62, 0.17),    # M0V
    (4440.0, 0.700, 0.700, 7.25, 2.85, 0.55, 0.12),    # K5V
    (5280.0, 0.867, 0.880, 5.86, 1.89, 0.41, 0.08),    # K0V
    (5770.0, 1.012, 1.000, 4.79, 1.55, 0.31, 0.06),    # G2V
    (6510.0, 1.473, 1.330, 3.40, 1.09, 0.21, 0.04),    # F5V
    (7220.0, 1.728, 1.610, 2.51, 0.74, 0.12, 0.03),    # F0V
])

CLASS_WEIGHTS = {"F": 0.15, "G": 0.25, "K": 0.25, "M": 0.35}
TEFF_RANGES = {"F": (6000.0, 6900.0), "G": (5300.0, 5990.0), "K": (3950.0, 5290.0),
               "M": (2850.0, 3900.0)}
DISTANCE_RANGES_PC = {"F": (40.0, 400.0), "G": (30.0, 350.0), "K": (20.0, 250.0),
                      "M": (5.0, 80.0)}

#: class: (radius range [R_earth], period range [d], weight FGK, weight M)
PLANET_CLASSES = {
    "hot_giant": ((10.0, 18.0), (0.8, 6.0), 0.25, 0.00),
    "warm_giant": ((8.0, 13.0), (8.0, 80.0), 0.10, 0.00),
    "neptune": ((4.0, 8.0), (2.0, 50.0), 0.15, 0.10),
    "sub_neptune": ((1.6, 4.0), (1.5, 40.0), 0.30, 0.35),
    "rocky": ((0.6, 1.6), (0.5, 20.0), 0.20, 0.35),
    "temperate_rocky": ((0.8, 1.5), (None, None), 0.00, 0.20),
}

#: Deliberately bad rows: (what is wrong, status snrkit must give).
BAD_ROWS = [
    ("planet radius left blank", "missing_radius"),
    ("period of -3.2 d", "bad_value"),
    ("planet name repeats an earlier row", "duplicate_name"),
    ("stellar Teff of 1500 K (outside snrkit's 2000-15000 K)", "bad_value"),
    ("impact parameter 1.8 (no transit)", "no_transit"),
    ("eccentricity of 1.3", "bad_value"),
    ("16 R_earth planet with no mass (beyond the mass-radius relation)", "missing_mass"),
    ("neither period nor semi-major axis", "missing_orbit"),
    ("stellar radius of 0", "bad_value"),
]

COLUMNS = [  # (name, unit or None, dtype)
    ("planet_name", None, str), ("host_name", None, str),
    ("planet_radius_earth", "earthRad", float), ("planet_radius_uncertainty_earth", "earthRad", float),
    ("planet_mass_earth", "earthMass", float), ("planet_mass_uncertainty_earth", "earthMass", float),
    ("period_days", "d", float), ("period_uncertainty_days", "d", float),
    ("semi_major_axis_au", "AU", float), ("impact_parameter", None, float),
    ("inclination_deg", "deg", float), ("eccentricity", None, float),
    ("periastron_argument_deg", "deg", float), ("transit_midtime_bjd_tdb", "d", float),
    ("transit_midtime_uncertainty_days", "d", float),
    ("host_teff_K", "K", float), ("host_radius_sun", "solRad", float),
    ("host_mass_sun", "solMass", float), ("host_logg_cgs", None, float),
    ("host_metallicity_dex", None, float),
    ("host_mag_V", None, float), ("host_mag_J", None, float), ("host_mag_H", None, float),
    ("host_mag_Ks", None, float), ("host_distance_pc", "pc", float),
    ("host_ra_deg", "deg", float), ("host_dec_deg", "deg", float),
]


def chen_kipping_mass(r_earth):
    """Chen & Kipping 2017 power laws as quoted by Kempton et al. 2018, eq. 2 [M_earth]."""
    r = np.asarray(r_earth, dtype=float)
    return np.where(r < 1.23, 0.9718 * r ** 3.58, 1.436 * r ** 1.70)


def make_hosts(rng):
    classes = rng.choice(list(CLASS_WEIGHTS), size=N_HOSTS, p=list(CLASS_WEIGHTS.values()))
    hosts = []
    seq = DWARF_SEQUENCE
    for i, cls in enumerate(classes):
        teff = rng.uniform(*TEFF_RANGES[cls])
        rad, mass, mv, vk, jh, hk = (np.interp(teff, seq[:, 0], seq[:, j]) for j in range(1, 7))
        rad *= 10 ** rng.normal(0.0, 0.03)
        mass *= 10 ** rng.normal(0.0, 0.02)
        lo, hi = DISTANCE_RANGES_PC[cls]
        dist = 10 ** rng.uniform(np.log10(lo), np.log10(hi))
        mu = 5 * np.log10(dist / 10.0)
        mks = mv - vk
        mh = mks + hk
        mj = mh + jh
        use_logg = rng.random() < 0.15
        logg = np.log10(G * mass * M_SUN / (rad * R_SUN) ** 2 * 100.0)
        hosts.append({
            "host_name": f"Demo-{i + 1:04d}", "class": cls,
            "host_teff_K": round(teff, 0), "host_radius_sun": round(rad, 4),
            "host_mass_sun": None if use_logg else round(mass, 4),
            "host_logg_cgs": round(logg, 3) if use_logg else None,
            "_mass": mass, "_rad": rad,
            "host_metallicity_dex": round(float(np.clip(rng.normal(0.0, 0.2), -0.8, 0.5)), 2),
            "host_mag_V": round(mv + mu, 3), "host_mag_J": round(mj + mu, 3),
            "host_mag_H": round(mh + mu, 3), "host_mag_Ks": round(mks + mu, 3),
            "host_distance_pc": round(dist, 2),
            "host_ra_deg": round(rng.uniform(0.0, 360.0), 5),
            "host_dec_deg": round(float(np.degrees(np.arcsin(rng.uniform(-1.0, 1.0)))), 5),
        })
    return hosts


def make_planet(rng, host, cls):
    rs_m, ms_kg = host["_rad"] * R_SUN, host["_mass"] * M_SUN
    (rlo, rhi), (plo, phi), _, _ = PLANET_CLASSES[cls]
    r = rng.uniform(rlo, rhi)
    if cls in ("hot_giant", "warm_giant"):
        m = 10 ** rng.uniform(np.log10(90.0 if cls == "hot_giant" else 30.0),
                              np.log10(1500.0 if cls == "hot_giant" else 1000.0))
        m_given = True
    else:
        m = float(chen_kipping_mass(r)) * 10 ** rng.normal(0.0, 0.15)
        m_given = rng.random() > 0.30
    mtot = ms_kg + m * M_EARTH
    if cls == "temperate_rocky":
        lum = 4 * np.pi * rs_m ** 2 * SIGMA_SB * host["host_teff_K"] ** 4 / L_SUN
        s = rng.uniform(0.3, 1.6)
        a = np.sqrt(lum / s) * AU
        p = 2 * np.pi * np.sqrt(a ** 3 / (G * mtot)) / DAY
    else:
        p = 10 ** rng.uniform(np.log10(plo), np.log10(phi))
        a = np.cbrt(G * mtot * (p * DAY) ** 2 / (4 * np.pi ** 2))
    k = r * R_EARTH / rs_m
    if p < 5.0:
        e, w = 0.0, 90.0
    else:
        e = float(min(rng.rayleigh(0.08), 0.5))
        w = rng.uniform(0.0, 360.0)
    b = rng.uniform(0.0, min(0.85, 1 - k - 0.02))
    efac = (1 - e ** 2) / (1 + e * np.sin(np.radians(w)))
    inc = np.degrees(np.arccos(b / (a / rs_m * efac)))
    form = rng.choice(["b", "inc", "none"], p=[0.55, 0.35, 0.10])
    t0_sig = 10 ** rng.uniform(np.log10(0.4), np.log10(4.0)) / 1440.0
    p_sig = 10 ** rng.uniform(np.log10(3e-7), np.log10(1e-4))
    t0 = 2459000.0 + rng.uniform(0.0, 1500.0)
    return {
        "planet_radius_earth": round(r, 4),
        "planet_radius_uncertainty_earth": round(r * rng.uniform(0.02, 0.08), 4),
        "planet_mass_earth": round(m, 4) if m_given else None,
        "planet_mass_uncertainty_earth": round(m * rng.uniform(0.1, 0.3), 4) if m_given else None,
        "period_days": round(p, 7), "period_uncertainty_days": float(f"{p_sig:.3g}"),
        "semi_major_axis_au": round(a / AU, 6) if rng.random() < 0.5 else None,
        "impact_parameter": round(b, 4) if form == "b" else None,
        "inclination_deg": round(inc, 4) if form == "inc" else None,
        "eccentricity": (None if (e == 0.0 and rng.random() < 0.5) else round(e, 4)),
        "periastron_argument_deg": None if e == 0.0 else round(w, 3),
        "transit_midtime_bjd_tdb": round(t0, 6),
        "transit_midtime_uncertainty_days": float(f"{t0_sig:.3g}"),
        "_class": cls,
    }


def make_rows(rng):
    hosts = make_hosts(rng)
    rows = []
    letters = "bcd"
    n_grazing = 0
    for h in hosts:
        n_pl = rng.choice([1, 2, 3], p=[0.60, 0.28, 0.12])
        w = np.array([v[2] if h["class"] != "M" else v[3] for v in PLANET_CLASSES.values()])
        planets = []
        for _ in range(n_pl):
            cls = rng.choice(list(PLANET_CLASSES), p=w / w.sum())
            pl = make_planet(rng, h, cls)
            if n_grazing < 2 and cls == "hot_giant" and pl["impact_parameter"] is not None:
                k = pl["planet_radius_earth"] * R_EARTH / (h["_rad"] * R_SUN)
                pl["impact_parameter"] = round(1.0 - 0.3 * k, 4)   # grazing on purpose
                pl["_class"] += " (grazing)"
                n_grazing += 1
            planets.append(pl)
        planets.sort(key=lambda q: q["period_days"])
        for letter, pl in zip(letters, planets):
            row = {key: v for key, v in h.items() if not key.startswith("_") and key != "class"}
            row.update({key: v for key, v in pl.items() if not key.startswith("_")})
            row["planet_name"] = f"{h['host_name']} {letter}"
            rows.append(row)
    return rows


def add_bad_rows(rows):
    """Insert the rows of BAD_ROWS (copies of good rows, then broken) at spread positions."""
    n_good = len(rows)
    positions = np.linspace(12, n_good - 5, len(BAD_ROWS)).astype(int)
    bad_meta = []
    for j, ((what, status), pos) in enumerate(zip(BAD_ROWS, positions)):
        src = dict(rows[pos - 5])
        if status != "duplicate_name":
            src["host_name"] = f"Demo-{901 + j:04d}"
            src["planet_name"] = f"Demo-{901 + j:04d} b"
        if what.startswith("planet radius"):
            src["planet_radius_earth"] = None
        elif what.startswith("period of"):
            src["period_days"] = -3.2
        elif what.startswith("stellar Teff"):
            src["host_teff_K"] = 1500.0
        elif what.startswith("impact parameter"):
            src["impact_parameter"], src["inclination_deg"] = 1.8, None
        elif what.startswith("eccentricity"):
            src["eccentricity"] = 1.3
        elif what.startswith("16 R_earth"):
            src["planet_radius_earth"], src["planet_mass_earth"] = 16.0, None
            src["planet_mass_uncertainty_earth"] = None
        elif what.startswith("neither"):
            src["period_days"], src["semi_major_axis_au"] = None, None
        elif what.startswith("stellar radius"):
            src["host_radius_sun"] = 0.0
        rows.insert(int(pos), src)
        bad_meta.append([what, status, src["planet_name"]])
    # input indices after all insertions
    names = [r["planet_name"] for r in rows]
    out = []
    for what, status, name in bad_meta:
        idx = [i for i, nm in enumerate(names) if nm == name]
        out.append({"input_index": idx[-1], "planet_name": name, "status": status, "what": what})
    return out


def main():
    rng = np.random.default_rng(SEED)
    rows = make_rows(rng)
    bad = add_bad_rows(rows)
    t = Table()
    for name, unit, dtype in COLUMNS:
        vals = [r.get(name) for r in rows]
        if dtype is str:
            t[name] = vals
            continue
        mask = [v is None for v in vals]
        col = MaskedColumn([np.nan if v is None else float(v) for v in vals], name=name,
                           mask=mask, unit=unit)
        t[name] = col
    t.meta["title"] = "snrkit demo catalogue (invented planets)"
    t.meta["source"] = ("invented: every star and planet is made up (names Demo-NNNN); "
                        "no real catalogue entry")
    t.meta["method"] = ("drawn with numpy default_rng(seed) by the script; host radius, mass, "
                        "absolute V and colours interpolated in Teff in a mean dwarf sequence "
                        "(Pecaut & Mamajek 2013, ApJS 208, 9, Table 5; values from memory); "
                        "apparent magnitudes m = M + 5 log10(d/10 pc), no extinction; masses of "
                        "small planets from Chen & Kipping 2017 as quoted by Kempton et al. 2018 "
                        "eq. 2 with 0.15 dex scatter; a from Kepler's third law (IAU 2015 "
                        "constants); inclinations from Winn 2010 eq. 7. See the script docstring.")
    t.meta["units"] = {name: (unit or ("mag" if "mag_" in name else "dimensionless"))
                       for name, unit, _ in COLUMNS if name not in ("planet_name", "host_name")}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_demo_catalogue.py"
    t.meta["seed"] = SEED
    t.meta["layout"] = "snrkit default catalogue layout (snrkit.planning.catalog.DEFAULT_COLUMNS)"
    t.meta["bad_rows"] = bad
    out = Path(__file__).resolve().parents[1] / "demo" / "catalogue.ecsv"
    t.write(out, format="ascii.ecsv", overwrite=True)
    print(f"wrote {out}: {len(t)} rows, {len(bad)} deliberately bad")


if __name__ == "__main__":
    main()
