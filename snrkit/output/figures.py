"""Figures as matplotlib objects: shared helpers, the ranking, the timeline and the noise.

Every plot function returns a :class:`matplotlib.figure.Figure` and accepts
an optional ``ax`` to draw into (a notebook's axes, a report's panel); none
switches matplotlib's backend, and none writes a file: callers save the
figure with :func:`save_figure` (atomic, format from the file name).
matplotlib is imported inside the functions.  The figures of the transits
and the spectra are in :mod:`snrkit.output.transit_figures`.
"""

import numpy as np

__all__ = ["save_figure", "new_axes", "wavelength_axis", "plain_log_ticks", "place_labels", "legend_below",
           "plot_ranking", "plot_timeline", "plot_precision", "plot_noise_budget", "FIGURE_FORMATS"]

#: File formats :func:`save_figure` writes, by suffix.
FIGURE_FORMATS = ("png", "pdf", "svg")

#: Tick values per decade offered on logarithmic axes, densest first (plain numbers).
_NICE = ((1.0, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0), (1.0, 2.0, 3.0, 5.0), (1.0, 2.0, 5.0), (1.0, 3.0))


def save_figure(fig, path, option="plot file", dpi=110):
    """Write ``fig`` to ``path`` atomically (.png, .pdf or .svg, from the name).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or pathlib.Path
    option : str
        Name of the option that named the file (for the error message).
    dpi : float
        Resolution of raster output.

    Returns
    -------
    pathlib.Path
    """
    from pathlib import Path
    from ..errors import InputError
    from ..io.atomic import atomic_path
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in FIGURE_FORMATS:
        raise InputError(option, str(path), "a name ending in .png, .pdf or .svg")
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=dpi)
    return path


def new_axes(ax, figsize, layout="constrained"):
    """``(figure, axes)``: the given axes and their figure, or a new Figure with one axes.

    A new figure is a plain :class:`matplotlib.figure.Figure` (no pyplot, no
    backend switch), so it is garbage-collected like any object.
    """
    if ax is not None:
        return ax.figure, ax
    from matplotlib.figure import Figure
    fig = Figure(figsize=figsize, layout=layout)
    return fig, fig.add_subplot(1, 1, 1)


def plain_log_ticks(axis, lo, hi, max_ticks=9):
    """Plain-number ticks (0.6, 1, 2, 5, ...) on a logarithmic ``axis`` spanning ``lo``..``hi``.

    matplotlib's default labels minor ticks of a short log range as
    ``6x10^-1``; these are the 1-2-3-5 values in plain notation instead.
    """
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter
    lo, hi = float(lo), float(hi)
    decades = 10.0 ** np.arange(np.floor(np.log10(lo)) - 1, np.ceil(np.log10(hi)) + 1)
    for nice in _NICE:
        cand = np.unique(np.outer(decades, nice).ravel())
        ticks = cand[(cand >= lo * (1 - 1e-9)) & (cand <= hi * (1 + 1e-9))]
        if len(ticks) <= max_ticks:
            break
    if len(ticks) > max_ticks:            # many decades: powers of ten only
        ticks = decades[(decades >= lo) & (decades <= hi)]
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    axis.set_minor_formatter(NullFormatter())


def _plain_formatter():
    """Major log ticks as plain numbers (0.1, 1, 10, 100) instead of powers of ten."""
    from matplotlib.ticker import FuncFormatter
    return FuncFormatter(lambda v, _pos: f"{v:g}")


def wavelength_axis(ax, lo, hi):
    """Log wavelength axis from ``lo`` to ``hi`` [µm] with plain tick labels."""
    ax.set_xscale("log")
    ax.set_xlim(lo, hi)
    plain_log_ticks(ax.xaxis, lo, hi)
    ax.set_xlabel("wavelength [µm]")


def legend_below(ax, handles=None, labels=None, ncol=3):
    """The legend under the axes (outside the data), in ``ncol`` columns."""
    if handles is None:
        handles, labels = ax.get_legend_handles_labels()
    ax.legend(handles, labels, fontsize=7.5, loc="upper center", bbox_to_anchor=(0.5, -0.2),
              ncol=ncol, frameon=False)


def _overlaps(box, boxes):
    return any(box.overlaps(b) for b in boxes)


def place_labels(ax, x, y, labels, fontsize=6.5, avoid=None):
    """Label points without overlaps: each label takes the first free spot around its point.

    Candidate spots are the eight positions around the point, then the same
    three and five times farther (with a leader line); a spot is free when
    the label's box (its size measured by the renderer) overlaps no label placed
    before, no marker (the labelled points and the points ``avoid = (x, y)``)
    and stays inside the axes.  Labels with no free spot
    are left out.  Call after the axes' limits and the figure's layout are
    final.

    Returns
    -------
    list of matplotlib.text.Annotation, int
        The labels placed and the number left out.
    """
    from matplotlib.transforms import Bbox
    fig = ax.figure
    fig.draw_without_rendering()               # runs the layout: final transforms
    renderer = fig._get_renderer() if hasattr(fig, "_get_renderer") else fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    pts = ax.transData.transform(np.column_stack([x, y]))
    r = 3.0 * fig.dpi / 72.0                   # half a marker, in pixels
    markers = pts if avoid is None else np.vstack([pts, ax.transData.transform(np.column_stack(avoid))])
    occupied = [Bbox.from_extents(px - r, py - r, px + r, py + r) for px, py in markers]
    near = [(4, 3, "left", "bottom"), (4, -3, "left", "top"), (-4, 3, "right", "bottom"),
            (-4, -3, "right", "top"), (0, 6, "center", "bottom"), (0, -6, "center", "top"),
            (6, 0, "left", "center"), (-6, 0, "right", "center")]
    # farther spots, joined to the point by a thin leader line
    spots = near + [(dx * k, dy * k, ha, va) for k in (3, 5) for dx, dy, ha, va in near]
    scale = fig.dpi / 72.0                     # points to pixels
    placed, left_out = [], 0
    for (px, py), xv, yv, text in zip(pts, x, y, labels):
        probe = ax.text(0, 0, text, fontsize=fontsize, transform=None)
        ext = probe.get_window_extent(renderer)     # the label's size, measured once
        probe.remove()
        w, h = ext.width * 1.05, ext.height * 1.1
        for dx, dy, ha, va in spots:
            x0 = px + dx * scale - {"left": 0.0, "center": w / 2, "right": w}[ha]
            y0 = py + dy * scale - {"bottom": 0.0, "center": h / 2, "top": h}[va]
            box = Bbox.from_bounds(x0, y0, w, h)
            inside = (box.x0 >= frame.x0 and box.x1 <= frame.x1 and box.y0 >= frame.y0
                      and box.y1 <= frame.y1)
            if inside and not _overlaps(box, occupied):
                far = abs(dx) + abs(dy) > 12
                occupied.append(box)
                placed.append(ax.annotate(
                    text, (xv, yv), xytext=(dx, dy), textcoords="offset points", ha=ha, va=va,
                    fontsize=fontsize, arrowprops=dict(arrowstyle="-", lw=0.4, color="0.4", shrinkA=0,
                                                       shrinkB=2) if far else None))
                break
        else:
            left_out += 1
    return placed, left_out


def plot_ranking(table, top=20, ax=None, labels="rank"):
    """Hours to the target against TSM (log axes), the ``top`` ranked rows labelled.

    Parameters
    ----------
    table : astropy.table.Table
        A :func:`snrkit.rank.rank_catalogue` result.
    top : int
        Rows (by rank) marked and labelled beside their points, where there
        is room (see :func:`place_labels`).
    ax : matplotlib.axes.Axes, optional
    labels : {"rank", "name"}
        Label with the rank (short: nearly all fit; the ranked table gives
        the names) or with the planet's name.

    Returns
    -------
    matplotlib.figure.Figure
    """
    own = ax is None
    fig, ax = new_axes(ax, (8.0, 5.8))
    ok = np.asarray(table["rank"]) > 0
    tsm = np.asarray(table["tsm"], dtype=np.float64)[ok]
    hours = np.asarray(table["hours_total"], dtype=np.float64)[ok]
    radius = np.asarray(table["radius_earth"], dtype=np.float64)[ok]
    names = np.asarray(table["name"]).astype(str)[ok]
    rank = np.asarray(table["rank"])[ok]
    good = np.isfinite(tsm) & (tsm > 0) & np.isfinite(hours) & (hours > 0)
    if not good.any():
        ax.text(0.5, 0.5, "no ranked rows", ha="center", va="center", transform=ax.transAxes)
        ax.set_axis_off()
        return fig
    sc = ax.scatter(tsm[good], hours[good], c=radius[good], s=14, cmap="viridis",
                    norm="log", zorder=2)
    best = good & (rank <= top)
    ax.scatter(tsm[best], hours[best], s=30, facecolors="none", edgecolors="C3", lw=0.8, zorder=3,
               label=f"the {top} best ranked" + (" (numbers: rank)" if labels == "rank" else ""))
    ax.legend(fontsize=7, loc="upper right", frameon=False)
    cb = fig.colorbar(sc, ax=ax)
    cb.set_label("planet radius [R⊕]")
    plain_log_ticks(cb.ax.yaxis, radius[good].min(), radius[good].max())
    ax.set_xscale("log")
    ax.set_yscale("log")
    for axis, v in ((ax.xaxis, tsm[good]), (ax.yaxis, hours[good])):
        lo, hi = v.min() / 2.0, v.max() * 1.6
        (ax.set_xlim if axis is ax.xaxis else ax.set_ylim)(lo, hi)
        plain_log_ticks(axis, lo, hi)
    ax.set_xlabel("transmission spectroscopy metric (TSM)")
    ax.set_ylabel(f"hours to {table.meta.get('target_sigma', 5):g} σ [h]")
    ax.set_title(f"{table.meta.get('test', '')}: {', '.join(table.meta.get('scenarios', []))} "
                 f"with {', '.join(table.meta.get('modes', []))} (planning estimate)", fontsize=9)
    ax.grid(alpha=0.25, which="major")
    sel = np.flatnonzero(good & (rank <= top))
    sel = sel[np.argsort(rank[sel])]
    text = rank[sel].astype(str) if labels == "rank" else names[sel]
    _, left_out = place_labels(ax, tsm[sel], hours[sel], text,
                                avoid=(tsm[good], hours[good]))
    if own:
        fig.set_layout_engine("none")           # labels were placed on the final layout
    if left_out:
        ax.text(0.99, 0.01, f"{left_out} of {len(sel)} top-{top} labels left out (no room)",
                transform=ax.transAxes, ha="right", va="bottom", fontsize=6.5, color="0.35")
    return fig


def plot_timeline(table, title=None, ax=None, fit_windows=False):
    """Timeline of transit windows, one row per planet; the legend sits outside the data.

    Parameters
    ----------
    table : astropy.table.Table
        A :func:`snrkit.planning.calendar.transit_windows` result (or the plan's chosen windows).
    title : str, optional
    ax : matplotlib.axes.Axes, optional
    fit_windows : bool
        Date axis from the first window to the last (with a margin) instead
        of the whole calendar searched.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.dates as mdates
    from matplotlib.patches import Patch
    names = list(dict.fromkeys(table.meta.get("planets", []) or list(table["planet"])))
    fig, ax = new_axes(ax, (10.0, 1.6 + 0.55 * max(len(names), 1)))
    if len(table):
        from ..planning.calendar import iso_strings
        t1, t2 = (mdates.date2num(np.asarray(iso_strings(table[c]), dtype="datetime64[s]"))
                  for c in ("start_utc", "end_utc"))
        row = np.array([names.index(p) for p in table["planet"]])
        ok = np.asarray(table["observable"], dtype=bool)
        # edges in the face colour keep windows of a few hours visible on a
        # range of months (a bar narrower than a pixel is drawn by its edge)
        for sel, colour, height in ((~ok, "0.72", 0.45), (ok, "tab:green", 0.7)):
            if sel.any():
                ax.barh(row[sel], t2[sel] - t1[sel], left=t1[sel], height=height, color=colour,
                        edgecolor=colour, linewidth=1.0)
    ax.set_yticks(range(len(names)), labels=names)
    ax.set_ylim(-0.7, max(len(names), 1) - 0.3)
    ax.invert_yaxis()
    lo = mdates.date2num(np.datetime64(table.meta["from_utc"][:19], "s"))
    hi = mdates.date2num(np.datetime64(table.meta["to_utc"][:19], "s"))
    if fit_windows and len(table):
        lo, hi = t1.min(), t2.max()
        pad = max(10.0, 0.05 * (hi - lo))
        lo, hi = lo - pad, hi + pad
    ax.set_xlim(lo, hi)
    loc = mdates.AutoDateLocator()
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))
    ax.set_xlabel("date (UTC, at the observer)")
    shown = set(np.asarray(table["observable"], dtype=bool).tolist()) if len(table) else {True, False}
    handles = [Patch(facecolor=c, label=text) for flag, c, text in
               ((True, "tab:green", "observable"), (False, "0.72", "not observable")) if flag in shown]
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0,
              fontsize="small", frameon=False)
    ax.set_title(title or f"transit windows; {table.meta.get('observatory', '')}",
                 fontsize="medium")
    ax.grid(axis="x", alpha=0.3)
    return fig


def plot_precision(ds, ax=None):
    """Per-transit noise (and the N-transit noise) against wavelength, the floor marked.

    Parameters
    ----------
    ds : xarray.Dataset
        A :func:`snrkit.photons.precision.system_precision` result.
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_axes(ax, (8.5, 4.5))
    n_tr = int(ds.attrs["n_transits"])
    any_sat = False
    for i, name in enumerate(ds["planet"].values):
        p = ds.isel(planet=i)
        lam = p["wavelength"].values
        line, = ax.step(lam, p["noise_ppm_per_transit"].values, where="mid",
                        label=f"{name}, one transit")
        if n_tr > 1:
            ax.step(lam, p["noise_ppm"].values, where="mid", color=line.get_color(),
                    linestyle="--", label=f"{name}, {n_tr} transits")
        sat = p["saturated"].values
        if sat.any():
            any_sat = True
            lo, hi = p["wavelength_low"].values, p["wavelength_high"].values
            for j in np.flatnonzero(sat):
                ax.axvspan(lo[j], hi[j], color=line.get_color(), alpha=0.15, lw=0)
    ax.axhline(float(ds.attrs["floor_ppm"]), color="k", linestyle=":",
               label=f"floor {ds.attrs['floor_ppm']:.0f} ppm")
    ax.set_yscale("log")
    ax.yaxis.set_major_formatter(_plain_formatter())
    lo = float(np.min(ds["wavelength_low"].values))
    hi = float(np.max(ds["wavelength_high"].values))
    wavelength_axis(ax, lo, hi)
    ax.set_ylabel("transit-depth precision per bin [ppm]")
    ax.set_title(str(ds.attrs["instrument_mode"]) + (" (shaded: saturated bins)" if any_sat else ""),
                 fontsize=9)
    legend_below(ax)
    return fig


def plot_noise_budget(ds, planet=0, ax=None):
    """Noise budget of one transit by term (photon, read, background, ...) against wavelength.

    Parameters
    ----------
    ds : xarray.Dataset
        A :func:`snrkit.photons.precision.system_precision` result (``noise_budget_ppm``).
    planet : int
        Index on the planet axis.
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_axes(ax, (8.5, 4.0))
    p = ds.isel(planet=planet)
    lam = p["wavelength"].values
    for t in p["term"].values:
        vals = p["noise_budget_ppm"].sel(term=t).values
        if np.any(np.isfinite(vals) & (vals > 0)):
            ax.step(lam, vals, where="mid", lw=1.0, label=str(t))
    ax.step(lam, p["noise_ppm_per_transit"].values, where="mid", color="k", lw=1.4,
            label="total, one transit")
    ax.set_yscale("log")
    ax.yaxis.set_major_formatter(_plain_formatter())
    wavelength_axis(ax, float(np.min(p["wavelength_low"].values)),
                    float(np.max(p["wavelength_high"].values)))
    ax.set_ylabel("noise per bin, one transit [ppm]")
    ax.set_title(f"{p['planet'].values}: {ds.attrs['instrument_mode']}", fontsize=9)
    legend_below(ax)
    return fig
