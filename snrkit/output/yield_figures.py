"""Figures of population yields (matplotlib imported inside the function)."""

import numpy as np

from ..errors import InputError

__all__ = ["plot_yields", "PLOT_AXES"]

#: Design coordinates a yield can be drawn against, with their axis labels.
PLOT_AXES = {"aperture_m": "telescope aperture [m]", "hours": "programme hours per planet [h]",
             "years": "mission years", "floor_ppm": "systematics floor [ppm]",
             "throughput_scale": "throughput scale"}


def _pick(ds, dim, value):
    values = [str(v) for v in ds[dim].values]
    if value is None:
        return values[0]
    if str(value) not in values:
        raise InputError(dim, value, "one of " + ", ".join(values))
    return str(value)


def plot_yields(ds, x="aperture_m", scenario=None, test=None, hz_positions=None, ax=None):
    """Yield against a design coordinate, one line per planet class.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`snrkit.planning.yields.population_yields`.
    x : str
        A key of :data:`PLOT_AXES` (designs that do not set it are left out).
    scenario, test : str, optional
        Which scenario and test (default: the first of each).
    hz_positions : sequence of str, optional
        Habitable-zone positions summed (default all).
    ax : matplotlib.axes.Axes, optional
        Draw into this axes (default: a new figure).

    Returns
    -------
    matplotlib.figure.Figure
        Classes that no design reaches are left out.  Error bars: the spread
        over population draws where there are several,
        else the Poisson spread sqrt(mean).  For a generated population a
        right-hand axis reads the counts for the stars the generator's
        volume really holds (``volume_scale``).
    """
    if x not in PLOT_AXES:
        raise InputError("x", x, "one of " + ", ".join(PLOT_AXES))
    sc = _pick(ds, "scenario", scenario)
    te = _pick(ds, "test", test)
    sub = ds.sel(scenario=sc, test=te)
    if hz_positions is not None:
        sub = sub.sel(hz_position=[_pick(ds, "hz_position", h) for h in hz_positions])
    xs = np.asarray(sub[x].values, dtype=float)
    keep = np.isfinite(xs)
    if not keep.any():
        raise InputError("x", x, "a design coordinate that the designs set",
                         detail="no design sets it")
    order = np.argsort(xs[keep])
    reached = sub["reached"].sum("hz_position").isel(design=np.flatnonzero(keep)[order])
    mean = reached.mean("draw")
    spread = reached.std("draw", ddof=1) if reached.sizes["draw"] > 1 else np.sqrt(mean)
    if ax is None:
        from matplotlib.figure import Figure
        fig = Figure(figsize=(8.0, 4.8))
        ax = fig.add_subplot(1, 1, 1)
    else:
        fig = ax.figure
    import matplotlib
    colours = matplotlib.colormaps["tab20"]
    shown = [pc for pc in mean["planet_class"].values if float(mean.sel(planet_class=pc).max()) > 0]
    for k, pc in enumerate(shown):          # classes that no design reaches are left out
        ax.errorbar(xs[keep][order], mean.sel(planet_class=pc).values,
                    yerr=np.asarray(spread.sel(planet_class=pc).values), marker="os^vD"[k % 5],
                    color=colours(k % 20), capsize=3, label=str(pc))
    ax.set_xlabel(PLOT_AXES[x])
    ax.set_ylabel("planets reaching the target (stars drawn)")
    scale = float(ds.attrs.get("volume_scale", np.nan))
    if np.isfinite(scale) and scale > 0:    # the same counts for the stars the volume holds
        right = ax.secondary_yaxis("right", functions=(lambda y: y * scale, lambda y: y / scale))
        right.set_ylabel("in the real volume")
    hz = "all" if hz_positions is None else ", ".join(hz_positions)
    ax.set_title(f"{te} at {float(ds.attrs.get('target_sigma', 5)):g} sigma, {sc}; habitable zone: {hz}",
                 fontsize=9)
    if shown:
        ax.legend(title="planet class", fontsize=7, loc="upper left",
                  bbox_to_anchor=(1.16 if np.isfinite(scale) else 1.01, 1.0))
    ax.grid(alpha=0.3)
    return fig
