"""The observing programme: transits needed turned into dated windows and hours.

:func:`programme_plan` takes a system (one or more planets), finds the
transits each planet needs (:func:`snrkit.engine.transits.transits_for_system`),
lists the transit windows from a start date with their observability
(:func:`snrkit.planning.calendar.transit_windows`), picks the first N observable
windows, and reports the total hours (visit = window length + overhead) and
the calendar span those windows take.
"""

import numpy as np

from ..errors import InputError

__all__ = ["programme_plan"]


def programme_plan(system, mode, scenario=None, *, test=None, sigma=5.0, start="2027-01-01",
                   years=5.0, observatory="space", n_max=500, resolution=None,
                   overhead_hours=None, padding_sigma=None):
    """Plan the transits of every planet of a system.

    Parameters
    ----------
    system : snrkit.System
        Planets with transit mid-times and a star with a sky position.
    mode, scenario, test, sigma, n_max, resolution, overhead_hours :
        As :func:`snrkit.engine.transits.transits_for_system`.
    start : str
        First date considered (UTC).
    years : float
        Length of the calendar searched (0 < years <= 30).
    observatory : str
        ``"space"``, ``"site:LON,LAT[,ELEV]"`` or ``"none"`` (see
        :func:`snrkit.planning.calendar.parse_observatory`).
    padding_sigma : float, optional
        Timing padding of each window in sigma (calendar default 3).

    Returns
    -------
    dict
        ``planets``: per planet ``name``, ``transits_needed``,
        ``windows`` (the chosen observable windows, ISO UTC), ``windows_found``,
        ``enough_windows``, ``hours_total`` (sum of chosen window lengths plus
        overhead per visit; a window includes its k-sigma timing padding, so
        this exceeds the N (T14 + baseline + overhead) of ``snrkit transits``
        by the padding), ``span_days`` / ``span_years`` (first window start
        to last window end), ``observable_fraction``; ``programme``: total
        hours and the longest span; ``table``: every window as an astropy Table
        (times as astropy Time columns, see
        :func:`snrkit.planning.calendar.transit_windows`).
    """
    from astropy.time import Time
    from . import calendar as cal
    from ..stats import forecast as fc
    from ..engine.transits import transits_for_system
    years = float(years)
    if not 0 < years <= 30:
        raise InputError("years", years, "a calendar length in (0, 30] years")
    if overhead_hours is None:   # the system file's [planet.observation] overhead, if any
        from ..bodies.system import common_observation
        overhead_hours = common_observation(system, "overhead", None)
    res = transits_for_system(system, mode, scenario, test=test, sigma=sigma, n_max=n_max,
                              resolution=resolution, probabilities=(),
                              overhead_hours=overhead_hours, dataset=False)
    t0 = cal.parse_date(start, "start")
    kw = {} if padding_sigma is None else {"padding_sigma": float(padding_sigma)}
    with cal.offline_time():
        end_iso = Time(t0.jd + 365.25 * years, format="jd", scale="utc").isot
    table = cal.transit_windows(system, t0, end_iso, observatory=observatory, **kw)
    overhead = fc.DEFAULT_OVERHEAD_HOURS if overhead_hours is None else float(overhead_hours)
    planets = []
    total = 0.0
    spans = []
    for rec in res["planets"]:
        record, hours, span, enough = _planet_plan(rec, table, overhead, years)
        if hours is not None and enough:
            total += hours
        if span is not None and enough:
            spans.append(span)
        planets.append(record)
    return {"planets": planets, "table": table,
            "programme": {"hours_total": total, "longest_span_years":
                          (max(spans) / 365.25) if spans else None,
                          "planets_complete": int(sum(p["enough_windows"] for p in planets)),
                          "planets": len(planets)},
            "notes": res["notes"]}


def _planet_plan(rec, table, overhead, years):
    """One planet's record: its windows, the first ``transits_needed`` observable ones, hours."""
    from . import calendar as cal
    rows = table[table["planet"] == rec["name"]]
    obs_rows = rows[np.asarray(rows["observable"], dtype=bool)]
    n = rec["transits_needed"]
    chosen = obs_rows[:n] if n else obs_rows[:0]
    hours = float(np.sum(np.asarray(chosen["duration_hours"], dtype=np.float64)) + overhead * len(chosen)) \
        if n else None
    # the windows carry k sigma_n of timing padding on each side; transits_for_system's
    # hours (T14 + baseline + overhead per visit) do not
    k_pad = float(table.meta.get("padding_sigma", cal.DEFAULT_PADDING_SIGMA))
    padding = float(np.sum(2.0 * k_pad * np.asarray(chosen["sigma_minutes"], dtype=np.float64)) / 60.0)
    span = float(chosen["end_utc"][-1].jd - chosen["start_utc"][0].jd) if len(chosen) else None
    enough = bool(n) and len(chosen) == n
    record = {
        "name": rec["name"], "scenario": rec["scenario"], "test": rec["test"],
        "status": rec["status"] if rec["status"] != "ok" or enough else "not_enough_windows",
        "reason": rec["reason"] if rec["status"] != "ok" else (
            "" if enough else f"only {len(obs_rows)} observable windows in {years:g} years; "
                              f"{n} needed"),
        "transits_needed": n, "windows_found": int(len(rows)),
        "observable_windows": int(len(obs_rows)),
        "observable_fraction": float(len(obs_rows) / len(rows)) if len(rows) else 0.0,
        "enough_windows": enough, "hours_total": hours if enough else None,
        "timing_padding_hours": padding if enough else None, "padding_sigma": k_pad,
        "span_days": span if enough else None,
        "span_years": (span / 365.25) if (span is not None and enough) else None,
        # ISO strings here (the records go to JSON); the table keeps Time columns
        "windows": [{"epoch": int(r["epoch"]), "mid_utc": m, "start_utc": a, "end_utc": b,
                     "sigma_minutes": float(r["sigma_minutes"])}
                    for r, m, a, b in zip(chosen, *(cal.iso_strings(chosen[c]) for c in
                                                    ("mid_utc", "start_utc", "end_utc")))],
    }
    return record, hours, span, enough
