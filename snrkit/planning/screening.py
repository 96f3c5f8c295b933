"""Screening a catalogue: every row checked with whole-array masks, a status and a reason each.

The order of the checks, the status codes and the estimates (masses from
radii, periods from semi-major axes, impact parameters from inclinations) are
described in :mod:`snrkit.planning.catalog`; the good rows become one
:class:`snrkit.System`.
"""

import warnings

import numpy as np
import astropy.units as u

from ..bodies import geometry as geo
from ..bodies import metrics as met
from ..constants import G, R_SUN, M_SUN, R_EARTH, M_EARTH, AU, DAY
from ..errors import InputError, GrazingTransitWarning
from ..bodies.limits import BANDS
from ..bodies.planet import Planet
from ..bodies.star import Star
from ..bodies.system import System
from .mapping import (FIELDS, _same_unit)

__all__ = []


def _text_values(col):
    data = np.asarray(np.ma.getdata(col))
    mask = np.asarray(np.ma.getmaskarray(col), dtype=bool)
    text = np.char.strip(data.astype(str))
    return np.where(mask | (text == "--"), "", text)


def _float_values(col):
    """Float64 values (NaN where missing) and a mask of unreadable text entries."""
    n = len(col)
    mask = np.asarray(np.ma.getmaskarray(col), dtype=bool)
    data = np.asarray(np.ma.getdata(col))
    bad = np.zeros(n, dtype=bool)
    raw = None
    if data.dtype.kind in "fiu":
        vals = data.astype(np.float64)
    elif data.dtype.kind == "b":
        vals = np.full(n, np.nan)
        bad = ~mask
        raw = data.astype(str)
    else:
        raw = np.char.strip(data.astype(str))
        empty = (raw == "") | (raw == "--")
        try:
            vals = np.where(empty, "nan", raw).astype(np.float64)
        except ValueError:
            # Dirty text column: read element by element (only on this fallback path).
            vals = np.full(n, np.nan)
            for i in np.flatnonzero(~empty & ~mask):
                try:
                    vals[i] = float(raw[i])
                except ValueError:
                    bad[i] = True
    vals = np.where(mask, np.nan, vals)
    return vals, bad & ~mask, raw


def _fmt(values):
    return np.char.mod("%.6g", np.asarray(values, dtype=np.float64))


def _range_text(spec):
    lo = "-inf" if spec.low is None else f"{spec.low:g}"
    hi = "inf" if spec.high is None else f"{spec.high:g}"
    lb = "[" if spec.low_inc and spec.low is not None else "("
    hb = "]" if spec.high_inc and spec.high is not None else ")"
    unit = f" {spec.unit}" if spec.unit else ""
    return f"{lb}{lo}, {hi}{hb}{unit}"


class _Status:
    """Per-row status/reason arrays; a row keeps the first problem found."""

    def __init__(self, n):
        self.code = np.full(n, "ok", dtype="<U24")
        self.reason = np.full(n, "", dtype=object)

    def mark(self, mask, code, make_reason):
        new = np.asarray(mask, dtype=bool) & (self.code == "ok")
        if new.any():
            self.code[new] = code
            self.reason[new] = np.asarray(make_reason(new), dtype=object)
        return new


def _field_values(table, res):
    """Each mapped field's values in its default unit (NaN where missing), raw and unreadable."""
    vals, raw, unread, names = {}, {}, {}, {}
    for k, (col, unit, factor, offset) in res.items():
        if FIELDS[k].kind == "text":
            names[k] = _text_values(table[col])
            continue
        v, bad, txt = _float_values(table[col])
        raw[k] = v
        if bad.any():
            unread[k] = (bad, txt)
        conv = v * factor + offset
        vals[k] = conv
    return vals, raw, unread, names


def _screen_names(st, pname, col_of, n):
    """Empty and repeated planet names."""
    st.mark(pname == "", "missing_name",
            lambda m: f"column {col_of('planet.name')!r} (planet name) is empty")
    _, first, inv = np.unique(pname, return_index=True, return_inverse=True)
    first_row = first[np.ravel(inv)]
    dup = (pname != "") & (first_row != np.arange(n))
    st.mark(dup, "duplicate_name",
            lambda m: np.char.add(np.char.add(np.char.add("planet name '", pname[m]),
                                              "' is already used by input row "),
                                  first_row[m].astype(str)))


def _screen_missing(st, unread, get, col_of):
    """Text that is not a number, and required values that are missing."""
    for k, (bad, txt) in unread.items():
        st.mark(bad, "bad_value", lambda m, k=k, txt=txt: np.char.add(np.char.add(
            f"column {col_of(k)!r} ({FIELDS[k].label}) holds '", txt[m]), "', which is not a number"))
    # 3. required values missing
    for k, code in (("planet.radius", "missing_radius"),
                    ("star.effective_temperature", "missing_star_temperature"),
                    ("star.radius", "missing_star_radius")):
        st.mark(np.isnan(get(k)), code,
                lambda m, k=k: f"column {col_of(k)!r} ({FIELDS[k].label}) is empty; a value is required")
    st.mark(np.isnan(get("star.mass")) & np.isnan(get("star.log_gravity")), "missing_star_mass",
            lambda m: (f"no stellar mass (column {col_of('star.mass')!r}) and no log g (column "
                       f"{col_of('star.log_gravity')!r}); one is required"))
    st.mark(np.isnan(get("planet.period")) & np.isnan(get("planet.semi_major_axis")), "missing_orbit",
            lambda m: (f"no period (column {col_of('planet.period')!r}) and no semi-major axis "
                       f"(column {col_of('planet.semi_major_axis')!r}); one is required"))


def _screen_ranges(st, vals, raw, res, col_of, unit_of):
    """Values outside the ranges Star and Planet enforce."""
    for k, v in vals.items():
        spec = FIELDS[k]
        with np.errstate(invalid="ignore"):
            bad = np.isinf(v)
            if spec.low is not None:
                bad |= (v < spec.low) if spec.low_inc else (v <= spec.low)
            if spec.high is not None:
                bad |= (v > spec.high) if spec.high_inc else (v >= spec.high)

        def why(m, k=k, v=v, spec=spec):
            uu = unit_of(k)
            head = f"column {col_of(k)!r} ({spec.label}) = "
            txt = np.char.add(head, _fmt(raw[k][m]))
            if uu:
                txt = np.char.add(txt, f" {uu}")
            converted = bool(uu and spec.unit and not _same_unit(uu, spec.unit)) or res[k][3] != 0
            if converted:
                txt = np.char.add(np.char.add(np.char.add(txt, " (= "), _fmt(v[m])),
                                  f" {spec.unit or ''})".replace(" )", ")"))
            return np.char.add(txt, f"; allowed {_range_text(spec)}")
        st.mark(bad, "bad_value", why)


def _estimates(st, get, col_of):
    """Masses, orbits and impact parameters over all rows, estimated where missing, and the
    rows they show impossible (inside the star, not transiting); returns the System inputs
    and the per-row flags."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rs = get("star.radius") * R_SUN
        rp = get("planet.radius") * R_EARTH
        ms_given = get("star.mass") * M_SUN
        logg = get("star.log_gravity")
        ms_from_logg = np.isnan(ms_given) & ~np.isnan(logg)
        ms = np.where(ms_from_logg, 10.0 ** logg * 1e-2 * rs ** 2 / G, ms_given)
        mp_given = get("planet.mass") * M_EARTH
        mass_est = np.isnan(mp_given)
        mp_est, _ = met.mass_from_radius(rp)
        mp = np.where(mass_est, mp_est, mp_given)
        st.mark(mass_est & ~np.isnan(rp) & np.isnan(mp_est), "missing_mass",
                lambda m: np.char.add(np.char.add(
                    f"no mass (column {col_of('planet.mass')!r}) and radius ", _fmt(rp[m] / R_EARTH)),
                    f" earthRad is at or above {met.MASS_RADIUS_MAX_EARTH_RADII} earthRad, the limit "
                    "of the mass-radius relation (Chen & Kipping 2017); a measured mass is needed"))
        per_given = get("planet.period") * DAY
        a_given = get("planet.semi_major_axis") * AU
        per_est = np.isnan(per_given) & ~np.isnan(a_given)
        a_est = np.isnan(a_given) & ~np.isnan(per_given)
        period = np.where(per_est, geo.period_from_semi_major_axis(a_given, ms + mp), per_given)
        a = np.where(a_est, geo.semi_major_axis_from_period(per_given, ms + mp), a_given)
        st.mark(rp >= rs, "bad_value",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "planet radius ", _fmt(rp[m] / R_EARTH)), " earthRad is not smaller than the star's "),
                    np.char.add(_fmt(rs[m] / R_EARTH), " earthRad")))
        st.mark(a <= rs + rp, "inside_star",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "semi-major axis ", _fmt(a[m] / AU)), " au is inside the star (R_star + R_planet = "),
                    np.char.add(_fmt((rs[m] + rp[m]) / AU), " au)")))
        ecc_raw = get("planet.eccentricity")
        ecc_assumed = np.isnan(ecc_raw)
        ecc = np.where(ecc_assumed, 0.0, ecc_raw)
        omega = np.radians(np.where(np.isnan(get("planet.periastron_argument")), 90.0,
                                    get("planet.periastron_argument")))
        with np.errstate(invalid="ignore"):
            periastron = a * (1 - ecc)
        st.mark(periastron <= rs + rp, "inside_star",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "periastron distance a(1 - e) = ", _fmt(periastron[m] / AU)),
                    " au is inside the star (R_star + R_planet = "),
                    np.char.add(_fmt((rs[m] + rp[m]) / AU), " au)")))
        b_given = get("planet.impact_parameter")
        inc = np.radians(get("planet.inclination"))
        b_from_inc = np.isnan(b_given) & ~np.isnan(inc)
        b_assumed = np.isnan(b_given) & np.isnan(inc)
        b = np.where(b_from_inc, geo.impact_parameter_from_inclination(a / rs, inc, ecc, omega),
                     np.where(b_assumed, 0.0, b_given))
        k_ratio = rp / rs
        st.mark(b >= 1 + k_ratio, "no_transit",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "impact parameter ", _fmt(b[m])), " >= 1 + Rp/Rs = "),
                    np.char.add(_fmt(1 + k_ratio[m]), ": the planet does not transit")))
        grazing = (b > 1 - k_ratio) & (b < 1 + k_ratio)
    teq_given = get("planet.equilibrium_temperature")
    flags = {
        "mass_estimated": mass_est & ~np.isnan(mp_est),
        "period_estimated": per_est,
        "semi_major_axis_estimated": a_est,
        "star_mass_from_log_gravity": ms_from_logg,
        "impact_parameter_from_inclination": b_from_inc,
        "impact_parameter_assumed": b_assumed,
        "eccentricity_assumed": ecc_assumed,
        "equilibrium_temperature_estimated": np.isnan(teq_given),
        "grazing": grazing,
    }

    x = dict(rs=rs, ms=ms, rp=rp, mp_given=mp_given, period=period, a_given=a_given,
             b_given=b_given, b_from_inc=b_from_inc, inc=inc, ecc=ecc, omega=omega,
             teq=teq_given)
    return x, flags


def _screened_system(st, flags, n, inputs):
    """The System of the good rows (rows System still refuses are marked), and the Kepler flag."""
    good = np.flatnonzero(st.code == "ok")
    system = _build_system(good, inputs)
    if system is None and good.size:
        # Safety net: screening missed a check System enforces.  Find the rows
        # one by one (slow path, never taken when the screening is complete).
        for i in good:
            try:
                _build_system(np.array([i]), inputs, strict=True)
            except InputError as exc:
                st.code[i] = "bad_value"
                st.reason[i] = str(exc)
        good = np.flatnonzero(st.code == "ok")
        system = _build_system(good, inputs, strict=True)
    # a given semi-major axis that disagrees with Kepler's third law (flag only)
    flags["kepler_mismatch"] = np.zeros(n, dtype=bool)
    if system is not None and good.size:
        flags["kepler_mismatch"][good] = system.kepler_mismatch
    return good, system


def _build_system(idx, x, strict=False):
    """System over rows ``idx`` (None if empty or, unless strict, if System rejects them)."""
    if idx.size == 0:
        return None
    g = x["get"]
    mags = {b: g(f"star.magnitudes.{b}")[idx] for b in BANDS
            if not np.all(np.isnan(g(f"star.magnitudes.{b}")[idx]))}
    feh = g("star.metallicity")[idx]
    try:
        with warnings.catch_warnings():
            # grazing rows are reported in the table's "grazing" column instead
            warnings.simplefilter("ignore", GrazingTransitWarning)
            star = Star(g("star.effective_temperature")[idx] * u.K, x["rs"][idx] * u.m,
                        mass=x["ms"][idx] * u.kg, metallicity=np.where(np.isnan(feh), 0.0, feh),
                        magnitudes=mags, distance=g("star.distance")[idx] * u.pc,
                        ra=g("star.right_ascension")[idx] * u.deg,
                        dec=g("star.declination")[idx] * u.deg,
                        name=x["host"][idx] if x["has_host"] else None)
            bi = x["b_given"][idx]
            inc = np.where(x["b_from_inc"][idx], x["inc"][idx], np.nan)
            planet = Planet(x["rp"][idx] * u.m, x["period"][idx] * u.s,
                            mass=x["mp_given"][idx] * u.kg,
                            mass_uncertainty=g("planet.mass_uncertainty")[idx] * u.M_earth,
                            radius_uncertainty=g("planet.radius_uncertainty")[idx] * u.R_earth,
                            semi_major_axis=x["a_given"][idx] * u.m,
                            impact_parameter=bi, inclination=inc * u.rad,
                            eccentricity=x["ecc"][idx], periastron_argument=x["omega"][idx] * u.rad,
                            transit_midtime=g("planet.transit_midtime")[idx],
                            transit_midtime_uncertainty=g("planet.transit_midtime_uncertainty")[idx] * u.d,
                            period_uncertainty=g("planet.period_uncertainty")[idx] * u.d,
                            name=x["pname"][idx])
            return System(star, planet, atmosphere_temperature=x["teq"][idx] * u.K)
    except InputError:
        if strict:
            raise
        return None
