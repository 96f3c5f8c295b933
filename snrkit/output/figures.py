"""Figures for the stacking results.  matplotlib is imported inside each function.

Every figure is written through :func:`snrkit.io.atomic.atomic_path`, so a
failed plot never leaves half a file.
"""

import numpy as np

__all__ = ["plot_transits", "simulated_spectrum", "display_bins", "plot_ranking"]


def _format(path):
    """Figure format from the file name (png, pdf or svg)."""
    from pathlib import Path
    from ..errors import InputError
    fmt = Path(path).suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf", "svg"):
        raise InputError("plot file", str(path), "a name ending in .png, .pdf or .svg")
    return fmt


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
    from ..detect import noise_per_bin
    sig = noise_per_bin(white_ppm, n_transits, floor_ppm, floor_averages)
    return model_ppm + rng.normal(0.0, 1.0, np.shape(model_ppm)) * sig, sig


def plot_transits(result, path, seed=0):
    """Significance vs transits (with the target) and a simulated spectrum, per planet.

    Parameters
    ----------
    result : dict
        Output of :func:`snrkit.transits.transits_for_system`.
    path : str or pathlib.Path
        PNG file to write.
    seed : int
        Seed of the simulated noise realisation.
    """
    from matplotlib.figure import Figure
    from ..io.atomic import atomic_path
    ds = result["dataset"]
    planets = result["planets"]
    n = len(planets)
    fig = Figure(figsize=(11, 3.6 * n))
    rng = np.random.default_rng(seed)
    edges = np.concatenate([ds["wavelength_lower"].values, ds["wavelength_upper"].values[-1:]])
    groups = display_bins(edges)
    for i, rec in enumerate(planets):
        ax1 = fig.add_subplot(n, 2, 2 * i + 1)
        ntr = ds["transits"].values
        ax1.plot(ntr, ds["significance"].values[i], color="C0", label="expected significance")
        ax1.axhline(rec["target_sigma"], color="C3", ls="--", label=f"target {rec['target_sigma']:g} sigma")
        if rec["transits_needed"]:
            ax1.axvline(rec["transits_needed"], color="0.5", ls=":", label=f"N = {rec['transits_needed']}")
        ax1.set_xscale("log")
        ax1.set_xlabel("number of transits")
        ax1.set_ylabel("significance [sigma]")
        ax1.set_title(f"{rec['name']}: {rec['scenario']} vs {rec['null_model']}", fontsize=9)
        ax1.legend(fontsize=7, loc="upper left")
        ax2 = fig.add_subplot(n, 2, 2 * i + 2)
        n_show = rec["transits_needed"] or int(ds["transits"].values[-1])
        model = ds["model_ppm"].values[i]
        white = ds["white_noise_ppm_per_transit"].values[i]
        floor = ds["floor_ppm"].values[i]
        ok = np.isfinite(white)
        wl = ds["wavelength"].values
        ax2.plot(wl, np.where(ok, model, np.nan), color="C0", lw=0.8, label=rec["scenario"])
        if "observed_depth_ppm" in ds:
            ax2.axhline(float(ds["observed_depth_ppm"].values[i]), color="0.4", ls=":", lw=0.8,
                        label="observed depth")
        ax2.plot(wl, np.where(ok, ds["null_ppm"].values[i], np.nan), color="C1", lw=0.8,
                 label=f"null: {rec['null_model']}")
        # Display bins: white noise and the floor (white in wavelength, see
        # snrkit.photons.precision) both combine as 1/sqrt(k) within a group.
        x, y, e = [], [], []
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
        ax2.errorbar(x, y, yerr=e, fmt="o", ms=2.5, color="k", lw=0.7,
                     label=f"simulated, {n_show} transits")
        ax2.set_xlabel("wavelength [um]")
        ax2.set_ylabel("transit depth [ppm]")
        ax2.legend(fontsize=7)
    fig.suptitle(f"mode {ds.attrs.get('instrument_mode', '')} - planning estimate", fontsize=10)
    fig.tight_layout()
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=_format(path), dpi=100)


def plot_ranking(table, path, top=20):
    """Hours to the target against TSM (log axes) for the ranked rows of a ranking table."""
    from matplotlib.figure import Figure
    from ..io.atomic import atomic_path
    ok = np.asarray(table["rank"]) > 0
    tsm = np.asarray(table["tsm"], dtype=np.float64)[ok]
    hours = np.asarray(table["hours_total"], dtype=np.float64)[ok]
    radius = np.asarray(table["radius_earth"], dtype=np.float64)[ok]
    names = np.asarray(table["name"]).astype(str)[ok]
    rank = np.asarray(table["rank"])[ok]
    fig = Figure(figsize=(7.5, 5.5))
    ax = fig.add_subplot(1, 1, 1)
    good = np.isfinite(tsm) & (tsm > 0) & np.isfinite(hours) & (hours > 0)
    if not good.any():
        ax.text(0.5, 0.5, "no ranked rows", ha="center", va="center", transform=ax.transAxes)
        ax.set_axis_off()
        with atomic_path(path) as tmp:
            fig.savefig(tmp, format=_format(path), dpi=110)
        return
    sc = ax.scatter(tsm[good], hours[good], c=np.log10(radius[good]), s=14, cmap="viridis")
    cb = fig.colorbar(sc, ax=ax)
    cb.set_label("log10 planet radius [R_earth]")
    for i in np.flatnonzero(good & (rank <= top)):
        ax.annotate(names[i], (tsm[i], hours[i]), fontsize=6, xytext=(3, 2),
                    textcoords="offset points")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("transmission spectroscopy metric (TSM)")
    ax.set_ylabel(f"hours to {table.meta.get('target_sigma', 5):g} sigma [h]")
    ax.set_title(f"{table.meta.get('test', '')}: {', '.join(table.meta.get('scenarios', []))} "
                 f"with {', '.join(table.meta.get('modes', []))} - planning estimate", fontsize=8)
    fig.tight_layout()
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=_format(path), dpi=110)
