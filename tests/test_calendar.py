"""Observing calendar: ephemeris, timing uncertainty, time scales, observability, CLI.

Every astropy reference value here is computed inside ``offline_time()`` and
with the network blocked (autouse fixture), so the suite proves that nothing
is downloaded.  Sources are given beside each check.
"""

import json
import socket
from fractions import Fraction

import numpy as np
import pytest
import astropy.units as u
from hypothesis import given, settings, strategies as st

from snrkit.planning import observatories
from snrkit.planning import windows
from snrkit.planning import ephemeris
from snrkit.planning import observability
from snrkit.planning import timescales
from snrkit.planning.observatories import GroundSite, SpaceObservatory
from snrkit.planning.timescales import offline_time
from snrkit.planning.observatories import bjd_to_utc
from snrkit.planning.windows import transit_windows
from snrkit.planning.ephemeris import predict_transits, epoch_grid, timing_sigma
from snrkit.constants import DAY, AU, C_LIGHT
from snrkit.errors import InputError
from snrkit.io.systemfile import load_system, read_system_text
from snrkit.io.tables import data_path

ALDER = str(data_path("demo", "alder.toml"))
BIRCH = str(data_path("demo", "birch.toml"))
CEDAR = str(data_path("demo", "cedar.toml"))
# An invented high-desert site (not a real observatory): lon, lat [deg], elevation [m]
SITE = GroundSite(-70.0, -25.0, 2500.0)


@pytest.fixture(autouse=True)
def no_network(monkeypatch):
    """Any attempt to open a network connection fails the test."""
    def refuse(*args, **kwargs):
        raise AssertionError("network access attempted during a calendar test")
    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)


@pytest.fixture(scope="module")
def alder():
    return load_system(ALDER)


@pytest.fixture(scope="module")
def cedar():
    return load_system(CEDAR)


# --------------------------------------------------------------------- ephemeris

def test_mid_times_follow_linear_ephemeris_exactly(alder):
    # Linear ephemeris T_n = T0 + n P (definition).  Reference: exact rational
    # arithmetic on the same float inputs, so only float rounding (< 1e-9 d) may differ.
    tab = predict_transits(alder, "2026-01-01", "2026-12-31")
    t0 = Fraction(float(alder.planet.transit_midtime[0]))
    p = Fraction(float(alder.planet.period_s[0])) / DAY
    n = np.asarray(tab["epoch"])
    assert np.all(np.diff(n) == 1)                         # consecutive epochs, no gaps
    for ni, mid in zip(n, tab["mid_bjd_tdb"]):
        assert abs(float(t0 + int(ni) * p) - float(mid.jd)) < 1e-9
    # Completeness: the neighbours of the first/last epoch fall outside the range
    with offline_time():
        from astropy.time import Time
        lo = Time("2026-01-01", scale="utc").tdb.jd
        hi = Time("2027-01-01", scale="utc").tdb.jd
    assert float(t0 + (int(n[0]) - 1) * p) < lo <= float(tab["mid_bjd_tdb"][0].jd)
    assert float(tab["mid_bjd_tdb"][-1].jd) <= hi < float(t0 + (int(n[-1]) + 1) * p)
    assert len(tab) in (77, 78)     # 365 d / 4.7371 d = 77.05: 77 or 78 transits


@settings(max_examples=40, deadline=None)
@given(t0=st.floats(2455000.0, 2465000.0), period=st.floats(0.3, 400.0),
       lo=st.floats(2450000.0, 2470000.0), span=st.floats(0.0, 3000.0))
def test_epoch_grid_selects_exactly_the_transits_in_range(t0, period, lo, span):
    # Property of the linear ephemeris: every T0 + nP in [lo, hi] appears once,
    # none outside; works before T0 (negative n) as after it.
    hi = lo + span
    idx, n = epoch_grid(np.array([t0]), np.array([period * DAY]), lo, hi)
    mid = t0 + n * period
    assert np.all((mid >= lo) & (mid <= hi))
    assert np.all(np.diff(n) == 1)
    first = n[0] if n.size else int(np.ceil((lo - t0) / period))
    assert t0 + (first - 1) * period < lo + 1e-9
    if n.size:
        assert t0 + (n[-1] + 1) * period > hi - 1e-9


def test_uncertainty_grows_as_stated(alder):
    # sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 (first-order propagation of the
    # linear ephemeris, uncorrelated T0 and P; common practice in timing work).
    # Alder b file values: sigma_T0 = 25 s, sigma_P = 0.5 s.
    tab = predict_transits(alder, "2027-06-01", "2027-07-01")
    n = np.asarray(tab["epoch"], dtype=float)
    expected_min = np.sqrt(25.0 ** 2 + n ** 2 * 0.5 ** 2) / 60.0
    np.testing.assert_allclose(tab["sigma_minutes"], expected_min, rtol=1e-12)
    # Hand computation: 2027-06-01 00:00 UTC = JD 2461557.5 (557 days after
    # 2025-11-21 00:00 = JD 2461000.5); (2461557.5 - 2461000.3241) / 4.7371 = 117.62,
    # so the first epoch is n = 118 and sigma = sqrt(25^2 + 118^2 0.5^2) = 64.078 s.
    assert int(n[0]) == 118
    assert tab["sigma_minutes"][0] * 60 == pytest.approx(64.078, abs=1e-3)


@settings(max_examples=40, deadline=None)
@given(s0=st.floats(0.0, 600.0), sp=st.floats(0.0, 60.0), n=st.integers(-5000, 5000))
def test_timing_sigma_laws(s0, sp, n):
    # Limits and symmetry of sigma_n: sigma_0 = sigma_T0; even in n;
    # non-decreasing in |n|; bounded by sigma_T0 + |n| sigma_P.
    assert timing_sigma(s0, sp, 0) == pytest.approx(s0)
    assert timing_sigma(s0, sp, n) == pytest.approx(timing_sigma(s0, sp, -n))
    assert timing_sigma(s0, sp, abs(n) + 1) >= timing_sigma(s0, sp, n) - 1e-12
    assert timing_sigma(s0, sp, n) <= s0 + abs(n) * sp + 1e-9


def test_reference_time_after_range_gives_negative_epochs(alder):
    # T0 (2025-11) after a 2024 range: the ephemeris runs backwards.
    tab = transit_windows(alder, "2024-03-01", "2024-03-15")
    assert len(tab) in (2, 3) and np.all(tab["epoch"] < 0)   # 14 d / 4.7371 d = 2.96
    assert np.all(np.diff(tab["sigma_minutes"]) < 0)   # nearer T0, smaller sigma


def test_range_without_transits(alder, capsys):
    # A range shorter than the period between two transits: an empty table, and
    # the JSON still lists the planet with no windows.
    from snrkit.cli.calendar import windows_json
    tab = transit_windows(alder, "2026-01-01T00:00", "2026-01-01T06:00", observatory=SITE)
    assert len(tab) == 0 and "max_sun_altitude_deg" in tab.colnames
    assert windows_json(tab)["planets"] == [{"name": "Alder b", "windows": []}]


def test_window_width(alder):
    # Window = T14 (1 + baseline multiple) + 2 k sigma; hand check with the
    # derived T14 (Winn 2010 via System.derived_arrays).
    t14_h = alder.derived_arrays()["t14_s"][0] / 3600.0
    a = transit_windows(alder, "2026-02-01", "2026-02-10", baseline=1.0, padding_sigma=3.0)
    b = transit_windows(alder, "2026-02-01", "2026-02-10", baseline="2 h", padding_sigma=0.0)
    sig_h = np.asarray(a["sigma_minutes"]) / 60.0
    np.testing.assert_allclose(a["duration_hours"], 2 * t14_h + 6 * sig_h, rtol=1e-10)
    np.testing.assert_allclose(b["duration_hours"], t14_h + 2.0, rtol=1e-10)


# --------------------------------------------------------------------- time scales

def test_tdb_to_utc_at_j2000():
    # J2000.0 = JD 2451545.0 TT = 2000-01-01 12:00:00 TT.  TT - UTC = 64.184 s
    # then: TAI - UTC = 32 s (IERS Bulletin C leap-second table, 1999-01-01 to
    # 2006-01-01) plus TT - TAI = 32.184 s (IAU 1991 definition), so UTC is
    # 11:58:55.816.  TDB - TT is below 1.7 ms (Fairhead & Bretagnon 1990
    # periodic terms; value from memory), hence the 3 ms tolerance.  The
    # light-time term is added back to isolate the scale change.
    utc, ltt = bjd_to_utc(2451545.0, 201.35, 12.80)
    with offline_time():
        from astropy.time import Time
        ref = Time("2000-01-01T11:58:55.816", scale="utc")
        dt = ((utc - ref).to_value(u.s) + ltt.to_value(u.s))
    assert abs(float(dt)) < 3e-3


def test_bjd_to_utc_against_astropy_for_demo_epoch(alder):
    # Independent astropy chain: t_obs = t_BJD - light_travel_time(t_obs) solved
    # with astropy alone (4 iterations), then astropy's TDB -> UTC.
    from astropy.time import Time
    from astropy.coordinates import SkyCoord, EarthLocation
    bjd = float(alder.planet.transit_midtime[0])
    utc, ltt = bjd_to_utc(bjd, 201.35, 12.80)
    with offline_time():
        star = SkyCoord(201.35 * u.deg, 12.80 * u.deg)
        geo = EarthLocation.from_geocentric(0, 0, 0, u.m)
        t_bary = Time(bjd, format="jd", scale="tdb")
        t = t_bary
        for _ in range(4):
            t = t_bary - t.light_travel_time(star, location=geo, ephemeris="builtin")
        ref = Time(t.tdb, location=geo).utc
        assert abs(float((utc - ref).to_value(u.s))) < 1e-3
        tab = transit_windows(alder, "2025-11-20", "2025-11-21")
        # the column is a UTC Time at full precision, shown to the second
        assert tab["mid_utc"].scale == "utc" and tab["mid_utc"].format == "isot"
        assert abs(float((tab["mid_utc"][0] - ref).to_value(u.s))) < 1e-3
        assert tab["mid_utc"][0].isot == Time(ref, precision=0).isot


def test_light_time_sign_and_size():
    # The barycentric light-time correction is the Roemer delay r_obs . n / c,
    # at most about 1 au / c = 499 s (Eastman, Siverd & Gaudi 2010, PASP 122,
    # 935, sect. 2.2; section number from memory).  Towards the anti-solar point the observer is nearer the
    # target than the barycentre, so the transit is seen before its BJD
    # (positive correction); towards the Sun it is seen after (negative).
    from astropy.time import Time
    from astropy.coordinates import get_sun
    bjd = 2461100.5
    with offline_time():
        sun = get_sun(Time(bjd, format="jd", scale="tdb"))   # geocentric (GCRS) direction
    anti_ra, anti_dec = (sun.ra.deg + 180.0) % 360.0, -sun.dec.deg
    _, l_anti = bjd_to_utc(bjd, anti_ra, anti_dec)
    _, l_sun = bjd_to_utc(bjd, sun.ra.deg, sun.dec.deg)
    l_anti, l_sun = float(l_anti.to_value(u.s)), float(l_sun.to_value(u.s))
    assert 480.0 < l_anti <= 1.0167 * AU / C_LIGHT      # aphelion distance / c
    assert -1.0167 * AU / C_LIGHT <= l_sun < -480.0
    # Round trip: the observer time plus astropy's correction at that time
    # gives back the BJD (fixed-point solution converged)
    from astropy.coordinates import SkyCoord, EarthLocation
    obs, delta = timescales.observer_times(np.array([bjd]), np.radians([anti_ra]), np.radians([anti_dec]))
    with offline_time():
        t = Time(obs, format="jd", scale="tdb")
        back = t.light_travel_time(SkyCoord(anti_ra * u.deg, anti_dec * u.deg),
                                   location=EarthLocation.from_geocentric(0, 0, 0, u.m),
                                   ephemeris="builtin").to_value(u.s)
    assert abs((obs[0] - bjd) * DAY + back[0]) < 1e-3


# --------------------------------------------------------------------- geometry vs astropy

def test_solar_elongation_against_get_sun():
    # Our geometric geocentric Sun direction against astropy's apparent
    # get_sun(t).separation(target); they differ by the annual aberration of
    # the Sun and of the target, 20.5 arcsec each (constant of aberration,
    # IAU 1976), so by at most 41 arcsec = 0.0114 deg; tolerance 0.015 deg.
    from astropy.time import Time
    from astropy.coordinates import SkyCoord, get_sun
    rng = np.random.default_rng(11)
    jd = 2460000.5 + rng.uniform(0, 2000, 25)
    ra = rng.uniform(0, 360, 25)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, 25)))
    mine = observability.elongation_deg(observability._sun_geocentric(jd), observability._target_unit_vectors(
        np.radians(ra), np.radians(dec)))
    with offline_time():
        sun = get_sun(Time(jd, format="jd", scale="tdb"))
        ref = sun.separation(SkyCoord(ra * u.deg, dec * u.deg).transform_to(sun.frame)).deg
    np.testing.assert_allclose(mine, ref, atol=0.015)


def test_space_flags_match_get_sun(cedar):
    # Each window's flag agrees with astropy's elongation at its mid-time.
    from astropy.time import Time
    from astropy.coordinates import SkyCoord, get_sun
    tab = transit_windows(cedar, "2026-01-01", "2026-12-31", observatory="space")
    assert 0 < tab["observable"].sum() < len(tab)
    with offline_time():
        t = Time(list(tab["mid_utc"]), scale="utc")
        sun = get_sun(t)
        el = sun.separation(SkyCoord(310.75 * u.deg, 5.25 * u.deg).transform_to(sun.frame)).deg
    inside = (el > 85.0 + 0.1) & (el < 135.0 - 0.1)
    outside = (el < 85.0 - 0.1) | (el > 135.0 + 0.1)
    assert np.all(tab["observable"][inside]) and not np.any(tab["observable"][outside])
    assert np.all(tab["min_elongation_deg"] <= el + 0.015)
    assert np.all(tab["max_elongation_deg"] >= el - 0.015)
    bad = tab[~tab["observable"]]
    assert all(r.startswith("solar elongation") for r in bad["reason"])


def test_sun_and_target_altitude_against_altaz():
    # Our hour-angle formula (Meeus 1998 eq. 13.6, number from memory; CIO-based
    # hour angle) against
    # astropy's AltAz frame without refraction (pressure = 0).  Residuals: the
    # Sun's diurnal parallax (8.8 arcsec) and diurnal aberration (0.3 arcsec);
    # tolerance 0.01 deg.
    from astropy.time import Time
    from astropy.coordinates import AltAz, SkyCoord, get_sun
    jd = 2461000.5 + np.linspace(0.0, 3.0, 37)          # every 2 h over three days
    sun_alt, tgt_alt = observability.altitudes_deg(SITE, jd, np.radians(75.40), np.radians(-33.10))
    with offline_time():
        t = Time(jd, format="jd", scale="tdb")
        frame = AltAz(obstime=t, location=SITE.location(), pressure=0 * u.hPa)
        ref_sun = get_sun(t).transform_to(frame).alt.deg
        ref_tgt = SkyCoord(75.40 * u.deg, -33.10 * u.deg).transform_to(frame).alt.deg
    assert sun_alt.min() < -30 and sun_alt.max() > 30      # both day and night sampled
    np.testing.assert_allclose(sun_alt, ref_sun, atol=0.01)
    np.testing.assert_allclose(tgt_alt, ref_tgt, atol=0.01)


def test_ground_flags_match_altaz():
    # Whole chain at a ground site: for each window, astropy AltAz at 25 points
    # inside it confirms the flag (Sun below -12 deg = end of nautical twilight,
    # target above 30 deg) to within the sampling tolerance.
    from astropy.time import Time
    from astropy.coordinates import AltAz, SkyCoord, get_sun
    system = load_system(CEDAR).select("Cedar b")     # 3.1 d period, 2 h windows
    tab = transit_windows(system, "2026-01-01", "2026-12-31", observatory=SITE)
    ok = np.asarray(tab["observable"])
    assert 0 < ok.sum() < len(tab)
    with offline_time():
        t1 = Time(list(tab["start_utc"]), scale="utc")
        t2 = Time(list(tab["end_utc"]), scale="utc")
        frac = np.linspace(0, 1, 25)
        t = t1[:, None] + (t2 - t1)[:, None] * frac[None, :]
        frame = AltAz(obstime=t, location=SITE.location(), pressure=0 * u.hPa)
        sun = get_sun(t).transform_to(frame).alt.deg
        tgt = SkyCoord(310.75 * u.deg, 5.25 * u.deg).transform_to(frame).alt.deg
    # observable windows: constraint met throughout (0.2 deg slack: 1 s ISO rounding
    # at the ends and 5-min sampling)
    assert np.all(sun[ok].max(axis=1) <= -12.0 + 0.2)
    assert np.all(tgt[ok].min(axis=1) >= 30.0 - 0.2)
    # unobservable windows: astropy sees a violation too
    viol = (sun[~ok].max(axis=1) > -12.0 - 0.2) | (tgt[~ok].min(axis=1) < 30.0 + 0.2)
    assert np.all(viol)
    np.testing.assert_allclose(tab["max_sun_altitude_deg"], sun.max(axis=1), atol=0.5)


def test_seasons_restrict_windows(cedar):
    free = transit_windows(cedar, "2026-06-01", "2026-09-30")
    seas = transit_windows(cedar, "2026-06-01", "2026-09-30", observatory=SpaceObservatory(
        seasons=[("2026-07-01", "2026-07-31")]))
    assert len(free) == len(seas)
    mid = seas["mid_utc"].datetime64
    july = (mid > np.datetime64("2026-07-01T12")) & (mid < np.datetime64("2026-07-31T12"))
    assert np.array_equal(np.asarray(seas["observable"]), np.asarray(free["observable"]) & july)
    assert all("seasonal" in r for r in seas["reason"][~july])


def test_multi_planet_equals_single_planet(cedar):
    # The vectorized path over planets equals one call per planet.
    both = transit_windows(cedar, "2026-03-01", "2026-05-01", observatory=SITE)
    for name in cedar.names:
        one = transit_windows(cedar.select(name), "2026-03-01", "2026-05-01", observatory=SITE)
        sub = both[both["planet"] == name]
        for col in ("epoch", "mid_utc", "start_utc", "end_utc", "observable"):
            assert list(sub[col]) == list(one[col])
        # both sample every <= 5 min (grids differ with the longest window in
        # the call), in which the Sun's altitude changes by < 1.25 deg
        np.testing.assert_allclose(sub["max_sun_altitude_deg"], one["max_sun_altitude_deg"],
                                   atol=1.25)


# --------------------------------------------------------------------- bad input

NO_POS = """
[star]
effective_temperature = 3400
radius = 0.3
mass = 0.3
[[planet]]
name = "P b"
radius = 1.5
period = 4.0
impact_parameter = 0.1
transit_midtime = 2461000.5
transit_midtime_uncertainty = "1 min"
period_uncertainty = "3 s"
"""


def test_missing_t0_names_field():
    text = NO_POS.replace("transit_midtime = 2461000.5\n", "").replace(
        "transit_midtime_uncertainty", "#")
    system = read_system_text(text.replace("#", "# x"))
    with pytest.raises(InputError) as exc:
        transit_windows(system, "2026-01-01", "2026-02-01", observatory=None)
    assert exc.value.field.startswith("planet.transit_midtime") and "P b" in exc.value.field


def test_missing_sky_position():
    system = read_system_text(NO_POS)
    for obs in ("space", SITE):
        with pytest.raises(InputError) as exc:
            transit_windows(system, "2026-01-01", "2026-02-01", observatory=obs)
        assert "star.right_ascension" in str(exc.value)
    # No constraint: still a calendar, light time not removed, windows widened
    with pytest.warns(ephemeris.CalendarWarning, match="no sky position"):
        tab = transit_windows(system, "2026-01-01", "2026-02-01", observatory=None)
    t14_h = system.derived_arrays()["t14_s"][0] / 3600
    sig_h = np.asarray(tab["sigma_minutes"]) / 60
    np.testing.assert_allclose(tab["duration_hours"],
                               2 * t14_h + 6 * sig_h + 2 * windows.MAX_LIGHT_TIME_S / 3600)
    assert np.all(tab["light_time_s"] == 0) and np.all(tab["observable"])


def test_missing_uncertainties_warn():
    text = NO_POS.replace('transit_midtime_uncertainty = "1 min"\n', "") + \
        "\n"
    system = read_system_text(text.replace("[star]", "[star]\nright_ascension = 10\ndeclination = 20"))
    with pytest.warns(ephemeris.CalendarWarning, match="taken as 0"):
        tab = transit_windows(system, "2026-01-01", "2026-01-10")
    # sigma_T0 taken as 0, sigma_P = 3 s kept: sigma_n = |n| 3 s
    np.testing.assert_allclose(tab["sigma_minutes"] * 60, np.abs(tab["epoch"]) * 3.0)


@pytest.mark.parametrize("start,end,field", [
    ("2026-03-01", "2026-02-01", "end (--to)"),
    ("2026-03-01T12:00", "2026-03-01T12:00", "end (--to)"),
    ("2026-02-30", "2026-03-01", "start (--from)"),
    ("next week", "2026-03-01", "start (--from)"),
    ("2026-01-01", "01/03/2026", "end (--to)"),
    ("1960-01-01", "1961-01-01", "start (--from)"),
    ("2026-01-01", "2070-01-01", "end (--to)"),          # longer than 30 years
])
def test_bad_ranges(alder, start, end, field):
    with pytest.raises(InputError) as exc:
        transit_windows(alder, start, end)
    assert exc.value.field == field


@pytest.mark.parametrize("kwargs,field", [
    ({"observatory": "moon"}, "--observatory"),
    ({"observatory": "site:10"}, "--observatory"),
    ({"observatory": "site:10,95"}, "site.latitude"),
    ({"padding_sigma": -1}, "padding_sigma"),
    ({"baseline": "3 kg"}, "--baseline"),
    ({"baseline": "often"}, "--baseline"),
])
def test_bad_options(alder, kwargs, field):
    with pytest.raises(InputError) as exc:
        transit_windows(alder, "2026-01-01", "2026-02-01", **kwargs)
    assert exc.value.field == field


def test_bad_elongation():
    with pytest.raises(InputError, match="elongation"):
        SpaceObservatory(elongation=(120, 90))
    with pytest.raises(InputError, match="elongation"):
        observatories.parse_observatory("space", elongation="10,200")
    with pytest.raises(InputError):
        observatories.parse_observatory("site:10,20", elongation="80,120")


# --------------------------------------------------------------------- command line

def _cli(capsys, *argv):
    """Run ``snrkit calendar ...`` through the real command line entry point."""
    from snrkit.cli.entry import main
    rc = main(["calendar", *argv])
    out, err = capsys.readouterr()
    return rc, out, err


def test_cli_json_shape(capsys):
    rc, out, err = _cli(capsys, CEDAR, "--from", "2026-01-01", "--to", "2026-02-28", "--json")
    assert rc == 0
    doc = json.loads(out)                       # exactly one JSON object
    assert [p["name"] for p in doc["planets"]] == ["Cedar b", "Cedar c"]
    for p in doc["planets"]:
        assert p["windows"]
        for w in p["windows"]:
            assert {"mid_utc", "start_utc", "end_utc", "sigma_minutes", "observable"} <= set(w)
            assert isinstance(w["observable"], bool) and isinstance(w["sigma_minutes"], float)
            assert w["start_utc"] < w["mid_utc"] < w["end_utc"]
            assert (w["reason"] is None) == w["observable"]


def test_cli_site_outputs(capsys, tmp_path):
    out_file, plot = tmp_path / "w.ecsv", tmp_path / "w.png"
    rc, out, err = _cli(capsys, CEDAR, "--from", "2026-04-01", "--to", "2026-04-30",
                        "--observatory", "site:-70,-25,2500", "--planet", "Cedar b",
                        "--out", str(out_file), "--plot", str(plot), "--baseline", "2h")
    assert rc == 0 and "Cedar b" in out and "Cedar c" not in out
    from astropy.table import Table
    tab = Table.read(out_file, format="ascii.ecsv")
    assert len(tab) == out.count("Cedar b") and "max_sun_altitude_deg" in tab.colnames
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]   # no temp files left
    rc, _, _ = _cli(capsys, CEDAR, "--from", "2026-04-01", "--to", "2026-04-30",
                    "--out", str(tmp_path / "w.csv"))
    assert rc == 0 and (tmp_path / "w.csv").read_text().startswith("planet,epoch,")


def test_time_columns_round_trip_through_ecsv_and_fits(capsys, tmp_path, cedar):
    # The windows carry astropy Time columns (BJD in TDB as Julian dates, the
    # observer's times in UTC as ISO); `--out` writes them as astropy does (ECSV:
    # ISO strings with their scale, rounded to the second shown; FITS: two-part
    # Julian dates with the time scale, lossless) and they read back as Time.
    # 2031 lies past the bundled leap-second table: writing must not warn.
    from astropy.table import Table
    from snrkit.cli.calendar import windows_json
    dates = ("--from", "2031-03-01", "--to", "2031-04-30")
    ref = transit_windows(cedar, *dates[1::2])
    assert ref["mid_bjd_tdb"].scale == "tdb" and ref["mid_bjd_tdb"].format == "jd"
    for suffix in (".ecsv", ".fits"):
        path = tmp_path / f"w{suffix}"
        rc, _, err = _cli(capsys, CEDAR, *dates, "--out", str(path))
        assert rc == 0, err
        with offline_time():   # UTC past the leap-second table warns otherwise
            back = Table.read(path, astropy_native=True) if suffix == ".fits" else Table.read(path)
            assert len(back) == len(ref) > 0
            assert list(back["planet"]) == list(ref["planet"])
            for col, scale, tol_s in (("mid_bjd_tdb", "tdb", 1e-3), ("mid_utc", "utc", 0.5),
                                      ("start_utc", "utc", 0.5), ("end_utc", "utc", 0.5)):
                assert back[col].scale == scale, (suffix, col)
                if suffix == ".fits":
                    tol_s = 1e-6
                assert np.max(np.abs((back[col] - ref[col]).to_value(u.s))) < tol_s, (suffix, col)
    # JSON keeps ISO strings, the same the table shows
    doc = windows_json(ref)
    first = doc["planets"][0]["windows"][0]
    assert isinstance(first["mid_utc"], str)
    with offline_time():
        assert first["mid_utc"] == ref[ref["planet"] == "Cedar b"]["mid_utc"][0].isot
    assert first["mid_bjd_tdb"] == pytest.approx(float(ref[ref["planet"] == "Cedar b"]["mid_bjd_tdb"][0].jd))


@pytest.mark.parametrize("argv,needle", [
    (["--from", "2026-03-01", "--to", "2026-01-01"], "--to"),
    (["--from", "soon", "--to", "2026-01-01"], "--from"),
    (["--from", "2026-01-01", "--to", "2026-02-01", "--observatory", "site:1"], "--observatory"),
    (["--from", "2026-01-01", "--to", "2026-02-01", "--elongation", "90"], "elongation"),
    (["--from", "2026-01-01", "--to", "2026-02-01", "--out", "w.txt"], "--out"),
    (["--from", "2026-01-01", "--to", "2026-02-01", "--planet", "Cedar z"], "Cedar b"),
])
def test_cli_bad_input_exit_2(capsys, argv, needle):
    rc, out, err = _cli(capsys, CEDAR, *argv)
    assert rc == 2 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1 and needle in err


def test_cli_missing_t0_exit_2(capsys, tmp_path):
    f = tmp_path / "x.toml"
    f.write_text(NO_POS.replace("transit_midtime = 2461000.5\n", ""))
    rc, out, err = _cli(capsys, str(f), "--from", "2026-01-01", "--to", "2026-02-01",
                        "--observatory", "none")
    assert rc == 2 and "planet.transit_midtime" in err


def test_beyond_bundled_tables_runs_offline_and_says_so(cedar):
    # Dates past the bundled IERS table and leap-second expiry: no download
    # (socket blocked), no astropy/ERFA warning escapes (warnings are errors
    # in this suite), and the metadata states the precision consequence.
    tab = transit_windows(cedar.select("Cedar b"), "2031-05-01", "2031-05-15",
                          observatory=SITE)
    assert len(tab) == 5
    notes = " ".join(tab.meta["notes"])
    assert "leap seconds from the bundled table, valid to" in notes
    assert "bundled IERS table" in notes
