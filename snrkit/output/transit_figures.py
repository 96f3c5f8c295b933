"""Figures of the transits needed and of the spectra, as matplotlib Figures.

Each function draws one thing into an optional ``ax`` and returns the
Figure; :func:`plot_transits` puts the two panels of every planet together.
Nothing here computes science: the curves, depths and noise come from
:func:`snrkit.transits.transits_for_system` and
:func:`snrkit.atmosphere.spectrum.transmission_spectrum`; the one thing drawn
here is a seeded noise realisation of the stacked spectrum
(:func:`simulated_spectrum`), with the noise of :func:`snrkit.detect.noise_per_bin`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from .figures import legend_below, new_axes, plain_log_ticks, wavelength_axis

__all__ = ["plot_transits", "plot_significance", "plot_simulated_spectrum", "plot_spectrum",
           "simulated_spectrum", "display_bins", "band_labels", "flat_spectra", "BAND_MARKS"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Mapping, Sequence
    from typing import Any
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure


#: Main bands marked on spectra: species -> centres [µm] (standard band
#: centres, e.g. the HITRAN band list; rounded).
BAND_MARKS = {
    "H2O": (0.94, 1.14, 1.4, 1.9, 2.7, 6.3), "CO2": (2.0, 2.7, 4.3, 15.0),
    "CH4": (1.7, 2.3, 3.3, 7.7), "CO": (2.3, 4.7), "NH3": (3.0, 6.1, 10.5),
    "O3": (0.6, 4.7, 9.6), "O2": (0.76, 1.27), "N2O": (4.5, 7.8), "SO2": (4.0, 7.3, 8.7),
    "HCN": (3.0, 14.0), "H2S": (2.6, 3.7), "Na": (0.589,), "K": (0.767,),
}


def flat_spectra(ds):
    """Yield (planet, scenario, Dataset-slice) for every spectrum of a spectra Dataset."""
    scen_dim = "scenario" in ds.dims
    for ip, planet in enumerate(ds["planet"].values):
        one = ds.isel(planet=ip)
        if scen_dim:
            for isc, scen in enumerate(ds["scenario"].values):
                yield str(planet), str(scen), one.isel(scenario=isc)
        else:
            yield str(planet), str(one["scenario"].values), one


def display_bins(edges_um, max_bins=80):
    """Group native bins into at most ``max_bins`` display bins (index groups)."""
    n = len(edges_um) - 1
    k = max(1, int(np.ceil(n / max_bins)))
    return [np.arange(i, min(i + k, n)) for i in range(0, n, k)]


def simulated_spectrum(model_ppm, white_ppm, floor_ppm, n_transits, floor_averages, rng):
    """One seeded noise realisation of the stacked spectrum after N transits.

    The white part scatters as sigma_1 / sqrt(N); a non-averaging floor is a
    single draw shared by the N transits (it does not average down).
    """
    from ..stats.detect import noise_per_bin
    sig = noise_per_bin(white_ppm, n_transits, floor_ppm, floor_averages)
    return model_ppm + rng.normal(0.0, 1.0, np.shape(model_ppm)) * sig, sig


def band_labels(species, lo, hi, rows=3, min_gap=0.07):
    """Band marks inside ``lo``..``hi`` [µm] as ``(centre, text, row)``, free of overlaps.

    Species sharing a centre (within 3 %) share one label ("H2O, CO2"); a
    label closer than ``min_gap`` in log10(wavelength) to the last one in a
    row goes to the next row; with every row taken it is dropped.
    """
    marks = {}
    for sp in sorted(species):
        for c in BAND_MARKS.get(sp, ()):
            if lo < c < hi:
                key = next((k for k in marks if abs(np.log(k / c)) < 0.03), c)
                marks.setdefault(key, []).append(sp)
    last = [-np.inf] * rows
    out = []
    for c in sorted(marks):
        for row in range(rows):
            if np.log10(c) - last[row] >= min_gap:
                last[row] = np.log10(c)
                out.append((c, ", ".join(marks[c]), row))
                break
    return out


def _mark_bands(ax, species, lo, hi):
    """Band lines and their labels, in rows above the data (the y range is raised to make room)."""
    trans = ax.get_xaxis_transform()
    marks = band_labels(species, lo, hi)
    if marks:
        rows = 1 + max(row for _, _, row in marks)
        ymin, ymax = ax.get_ylim()
        free = 0.075 * rows + 0.03              # axes fraction the labels take
        ax.set_ylim(ymin, ymin + (ymax - ymin) / (1.0 - free))
    for c, text, row in marks:
        ax.axvline(c, color="0.85", lw=0.6, zorder=0)
        ax.text(c, 0.98 - 0.075 * row, text, transform=trans, fontsize=6.5, ha="center",
                va="top", color="0.3", bbox=dict(facecolor="white", edgecolor="none", pad=0.5,
                                                 alpha=0.8))


#: Line styles of the significance reached with a given probability.
_REACHED_STYLES = {0.5: ((0, (4, 3)), 1.6), 0.9: ("-.", 1.1)}


def _reached_curves(ax, ds, planet, ntr):
    """The significance reached with each probability of the Dataset (dashed over the median)."""
    if "significance_reached" not in ds:
        return
    for chance, curve in zip(ds["chance"].values, ds["significance_reached"].values[planet]):
        ls, lw = _REACHED_STYLES.get(round(float(chance), 6), (":", 1.0))
        extra = " (the median)" if chance == 0.5 else ""
        ax.plot(ntr, curve, color="C9" if chance == 0.5 else "C4", ls=ls, lw=lw,
                label=f"reached with {chance:.0%} probability{extra}".replace("%", " %"))


def plot_significance(result: Mapping[str, Any], planet: int | str = 0, ax: Axes | None = None) -> Figure:
    """Expected significance against transits, with the probability of a detection.

    The left axis is the significance of the noise-free data (the median
    outcome) and the significance a real data set reaches with 50 % and with
    90 % probability (the result's ``significance_reached``, noncentral
    chi^2 quantiles; the 50 % curve is the median one); the right axis the
    probability that a real data set reaches the target, with the transits
    needed for 50 % and 90 % marked (all from the result,
    :mod:`snrkit.stats.probability`).

    Parameters
    ----------
    result : dict
        Output of :func:`snrkit.transits.transits_for_system`.
    planet : int
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_axes(ax, (8.0, 4.4))
    ds, rec = result["dataset"], result["planets"][planet]
    ntr = ds["transits"].values
    ax.plot(ntr, ds["significance"].values[planet], color="C0", label="expected significance")
    _reached_curves(ax, ds, planet, ntr)
    ax.axhline(rec["target_sigma"], color="C3", ls="--", lw=1.0, label=f"target {rec['target_sigma']:g} σ")
    if rec["transits_needed"]:
        ax.axvline(rec["transits_needed"], color="C0", ls=":", lw=1.0,
                   label=f"N = {rec['transits_needed']} (expected)")
    ax.set_xscale("log")
    ax.set_xlim(ntr[0], ntr[-1])
    plain_log_ticks(ax.xaxis, ntr[0], ntr[-1])
    ax.set_xlabel("number of transits")
    ax.set_ylabel("significance [σ]")
    ax2 = ax.twinx()
    ax2.plot(ntr, ds["probability"].values[planet], color="C2", lw=1.0,
             label=f"probability of ≥ {rec['target_sigma']:g} σ")
    ax2.set_ylim(0, 1.02)
    ax2.set_ylabel("probability", color="C2")
    styles = {"0.5": ("--", "50 %"), "0.9": ("-.", "90 %")}
    for key, n in (rec.get("transits_for_probability") or {}).items():
        if key in styles:
            ax2.axhline(float(key), color="C2", ls=styles[key][0], lw=0.6, alpha=0.6)
            if n:
                ax2.axvline(n, color="C2", ls=styles[key][0], lw=1.0,
                            label=f"N = {n} for {styles[key][1]} probability")
    handles = ax.get_legend_handles_labels()
    more = ax2.get_legend_handles_labels()
    legend_below(ax, handles[0] + more[0], handles[1] + more[1])
    ax.set_title(f"{rec['name']}: {rec['scenario']} against {rec['null_model']}", fontsize=9)
    return fig


def _display_points(ds, planet, groups, n_show, rng):
    ok = np.isfinite(ds["white_noise_ppm_per_transit"].values[planet])
    model = ds["model_ppm"].values[planet]
    white = ds["white_noise_ppm_per_transit"].values[planet]
    floor = ds["floor_ppm"].values[planet]
    wl = ds["wavelength"].values
    x, y, e = [], [], []
    # Display bins: white noise and the floor (white in wavelength, see
    # snrkit.photons.precision) both combine as 1/sqrt(k) within a group.
    for g in groups:
        g = g[ok[g]]
        if g.size == 0:
            continue
        wn = np.sqrt(np.sum(white[g] ** 2)) / g.size
        fl = np.sqrt(np.sum(floor[g] ** 2)) / g.size
        sim, sig = simulated_spectrum(np.mean(model[g]), wn, fl, n_show,
                                      bool(ds.attrs.get("floor_averages_down", 0)), rng)
        x.append(np.mean(wl[g]))
        y.append(sim)
        e.append(sig)
    return np.array(x), np.array(y), np.array(e), ok


def plot_simulated_spectrum(result, planet=0, ax=None, seed=0):
    """Model spectrum, null, observed depth and a simulated spectrum at the transits needed.

    The null is drawn where the test's fit puts it (``null_fitted_ppm``).  One planet per panel, so that features of 100 ppm are not flattened by
    another planet's depth.  Bins lost to saturation are left blank.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_axes(ax, (8.0, 4.4))
    ds, rec = result["dataset"], result["planets"][planet]
    rng = np.random.default_rng(seed)
    edges = np.concatenate([ds["wavelength_lower"].values, ds["wavelength_upper"].values[-1:]])
    n_show = rec["transits_needed"] or int(ds["transits"].values[-1])
    x, y, e, ok = _display_points(ds, planet, display_bins(edges), n_show, rng)
    wl = ds["wavelength"].values
    ax.step(wl, np.where(ok, ds["model_ppm"].values[planet], np.nan), where="mid", color="C0",
            lw=1.0, label=f"model: {rec['scenario']}")
    null = ds["null_fitted_ppm"].values[planet]        # as the test fits it, at N transits
    ax.step(wl, np.where(ok, null, np.nan), where="mid", color="C1", lw=0.9,
            label=f"null: {rec['null_model']} (best fit)")
    ax.axhline(float(ds["observed_depth_ppm"].values[planet]), color="0.4", ls=":", lw=0.9,
               label="observed transit depth")
    if not ok.all():                  # one band per run of adjacent saturated bins
        lo_e, hi_e = ds["wavelength_lower"].values, ds["wavelength_upper"].values
        bad = np.flatnonzero(~ok)
        for k, run in enumerate(np.split(bad, np.flatnonzero(np.diff(bad) > 1) + 1)):
            ax.axvspan(lo_e[run[0]], hi_e[run[-1]], color="0.92", lw=0, zorder=0,
                       label="saturated bins (dropped)" if k == 0 else None)
    if x.size:
        ax.errorbar(x, y, yerr=e, fmt="o", ms=2.5, color="k", lw=0.7,
                    label=f"simulated, {n_show} transit{'s' if n_show != 1 else ''}")
    wavelength_axis(ax, edges[0], edges[-1])
    ax.set_ylabel("transit depth [ppm]")
    kind, _, arg = str(rec["test"]).partition(":")      # "species:H2O", "against:B"
    test = {"species": f"{arg} test", "against": f"test against {arg}"}.get(kind, f"{kind} test")
    ax.set_title(f"{rec['name']}, {test}: {rec['mode']}", fontsize=9)
    legend_below(ax, ncol=4)
    return fig


def plot_transits(result: Mapping[str, Any], seed: int = 0, axes: Sequence[Axes] | None = None) -> Figure:
    """Significance against transits and a simulated spectrum, one row per planet.

    Parameters
    ----------
    result : dict
        Output of :func:`snrkit.transits.transits_for_system`.
    seed : int
        Seed of the simulated noise realisation.
    axes : array of matplotlib.axes.Axes, shape (planets, 2), optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    n = len(result["planets"])
    if axes is None:
        from matplotlib.figure import Figure
        fig = Figure(figsize=(16, 4.6 * n), layout="constrained")
        axes = fig.subplots(n, 2, squeeze=False)
    else:
        axes = np.asarray(axes).reshape(n, 2)
        fig = axes[0, 0].figure
    for i in range(n):
        plot_significance(result, i, ax=axes[i, 0])
        plot_simulated_spectrum(result, i, ax=axes[i, 1], seed=seed + i)
    fig.suptitle(f"mode {result['dataset'].attrs.get('instrument_mode', '')} (planning estimate)",
                 fontsize=10)
    return fig


def _spectrum_panel(ax, lam, one, label, relative, first):
    depth = one["transit_depth_ppm"].values
    obs = float(one["observed_depth_ppm"])
    base = obs if relative else 0.0
    line, = ax.step(lam, depth - base, where="mid", lw=1.0, label=label)
    if first:                           # one planet's scenarios share its observed depth
        ax.axhline(obs - base, color="0.4", ls=":", lw=0.9,
                   label="observed transit depth" if not relative else "observed depth (zero)")
    if "depth_without_species_ppm" in one:
        w = one["depth_without_species_ppm"]
        for k, sp in enumerate(w["species"].values):
            vals = w.sel(species=sp).values
            if np.all(np.isfinite(vals)):
                ax.step(lam, vals - base, where="mid", lw=0.7, ls=("--", "-.", ":")[k % 3],
                        color=line.get_color(), alpha=0.6, label=f"{label} without {sp}")


def plot_spectrum(ds, species=None, ax=None):
    """Transit depth against wavelength with the main bands marked.

    Without ``ax``: one panel per planet (its scenarios together), each with
    its observed transit depth.  With ``ax``: every spectrum on that axes as
    depth relative to its planet's observed depth, so planets of different
    depths share one scale.

    Parameters
    ----------
    ds : xarray.Dataset
        :func:`snrkit.cli.spectrum.spectra_for_system` result.
    species : set of str, optional
        Species whose bands are marked (default every species of
        :data:`BAND_MARKS`).
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    flat = list(flat_spectra(ds))
    planets = list(dict.fromkeys(p for p, _, _ in flat))
    lam = ds["wavelength"].values
    lo, hi = float(ds["wavelength_lower"].values[0]), float(ds["wavelength_upper"].values[-1])
    relative = ax is not None
    if relative:
        fig, axes = ax.figure, {p: ax for p in planets}
    else:
        from matplotlib.figure import Figure
        fig = Figure(figsize=(10, 3.4 * len(planets) + 0.4), layout="constrained")
        axes = dict(zip(planets, fig.subplots(len(planets), 1, squeeze=False)[:, 0]))
    seen = set()
    for planet, scen, one in flat:
        _spectrum_panel(axes[planet], lam, one, f"{planet}: {scen}" if relative else scen, relative,
                        first=(axes[planet] not in seen))
        seen.add(axes[planet])
    for a in dict.fromkeys(axes.values()):
        wavelength_axis(a, lo, hi)
        a.set_ylabel("depth − observed depth [ppm]" if relative else "transit depth [ppm]")
        _mark_bands(a, set(BAND_MARKS) if species is None else species, lo, hi)
        legend_below(a)
    if not relative:
        for planet, a in axes.items():
            a.set_title(f"{planet} (planning estimate)", fontsize=9)
    return fig
