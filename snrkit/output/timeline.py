"""The calendar's timeline figure: transit windows against time, coloured by observability."""


import numpy as np

from ..errors import InputError

__all__ = ["plot_timeline"]


def plot_timeline(table, path, title=None):
    """Draw a timeline of windows (one row per planet) and save it atomically.

    Parameters
    ----------
    table : astropy.table.Table
        A :func:`transit_windows` result.
    path : str or pathlib.Path
        Output image (``.png``, ``.pdf`` or ``.svg``).
    title : str, optional
        Figure title.
    """
    from pathlib import Path
    from matplotlib.figure import Figure
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.patches import Patch
    import matplotlib.dates as mdates
    from ..io.atomic import atomic_path
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf", "svg"):
        raise InputError("--plot", str(path), "a .png, .pdf or .svg file name")
    names = list(dict.fromkeys(table.meta.get("planets", []) or list(table["planet"])))
    fig = Figure(figsize=(10.0, 1.2 + 0.6 * max(len(names), 1)))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    if len(table):
        t1 = mdates.date2num(np.asarray(table["start_utc"], dtype="datetime64[s]"))
        t2 = mdates.date2num(np.asarray(table["end_utc"], dtype="datetime64[s]"))
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
    ax.set_xlim(lo, hi)
    loc = mdates.AutoDateLocator()
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))
    ax.set_xlabel("date (UTC, at the observer)")
    ax.legend(handles=[Patch(facecolor="tab:green", label="observable"),
                       Patch(facecolor="0.72", label="not observable")],
              loc="upper right", fontsize="small", framealpha=0.9)
    ax.set_title(title or f"transit windows; {table.meta.get('observatory', '')}",
                 fontsize="medium")
    ax.grid(axis="x", alpha=0.3)
    fig.tight_layout()
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=120)
