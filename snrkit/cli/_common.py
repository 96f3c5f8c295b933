"""Helpers shared by command modules: JSON output, per-planet selection, atomic writes."""

import json
import math
import sys

__all__ = ["add_system_args", "print_json", "jsonable", "print_notes", "check_output_path", "one_mode",
           "check_writable", "write_table", "TABLE_FORMATS"]


def add_system_args(p):
    """Add the SYSTEM positional and ``--planet NAME`` option."""
    p.add_argument("system", metavar="SYSTEM.toml", help="system file (TOML)")
    p.add_argument("--planet", metavar="NAME",
                   help="answer for this planet only (default: every planet in the file)")


def jsonable(x):
    """Convert numpy / astropy scalars and arrays to JSON-ready Python values.

    NaN and infinities become ``None`` (JSON has no NaN).
    """
    import numpy as np
    from astropy import units as u
    if isinstance(x, u.Quantity):
        x = x.value
    if isinstance(x, dict):
        return {str(k): jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return [jsonable(v) for v in x.tolist()]
    if isinstance(x, (np.bool_, bool)):
        return bool(x)
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return None if (math.isnan(x) or math.isinf(x)) else x
    if isinstance(x, np.str_):
        return str(x)
    return x


def print_json(obj):
    """Print exactly one JSON object on stdout."""
    sys.stdout.write(json.dumps(jsonable(obj), indent=2, allow_nan=False) + "\n")


def print_notes(notes, limit=8):
    """Print the science layer's notes (warnings) on stderr, one line each."""
    notes = list(notes or [])
    for note in notes[:limit]:
        sys.stderr.write(f"note: {note}\n")
    if len(notes) > limit:
        sys.stderr.write(f"note: ... and {len(notes) - limit} more\n")


def check_output_path(path, suffixes, option):
    """Check an output file name before any long computation."""
    from pathlib import Path
    from ..errors import InputError
    p = Path(path)
    if p.suffix.lower() not in suffixes:
        raise InputError(option, str(path), "a file name ending in " + " or ".join(suffixes))
    return check_writable(p, option)


def check_writable(path, option):
    """Refuse an output path that cannot be written, before any computation.

    Checks the length of the path and of each name in it, that the folder
    exists and may be written, and that the path is not a folder.

    Parameters
    ----------
    path : str or pathlib.Path
        The output file the user named.
    option : str
        The option that named it (for the message).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        One line naming the option, the path and what is allowed.
    """
    import os
    from pathlib import Path
    from ..errors import InputError
    from ..io.tomlfile import check_input_path
    p = check_input_path(path, option, "an output file")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(option, str(path), "a file in an existing folder")
    if p.is_dir():
        raise InputError(option, str(path), "a file name, not a folder")
    import tempfile
    try:                        # the real test: can a file be created there?
        fd, probe = tempfile.mkstemp(prefix=f".probe.{os.getpid()}.snrkit-partial", dir=str(parent))
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        raise InputError(option, str(path), "a file in a folder you may write to",
                         detail=exc.strerror or "") from None
    if p.exists() and not os.access(p, os.W_OK):
        raise InputError(option, str(path), "a file you may overwrite (it is read-only)")
    return p


#: Table formats of ``--out`` by file suffix.
TABLE_FORMATS = {".ecsv": "ascii.ecsv", ".csv": "ascii.csv", ".fits": "fits"}


def write_table(table, path):
    """Write an astropy Table as .ecsv (with metadata), .csv or .fits, atomically.

    FITS: units that the FITS standard does not name (``earthRad``, ``earthMass``)
    go into the column description and the table's settings into one JSON
    header value (``SNRKIT``), so the file reads back without warnings.
    Time columns (calendar, plan) are written as astropy writes them: ISO
    strings with their scale in ECSV, two-part Julian dates with their time
    scale in FITS (read back with ``Table.read(..., astropy_native=True)``).
    """
    import contextlib
    import json
    from pathlib import Path
    from ..io.atomic import atomic_path
    fmt = TABLE_FORMATS[Path(path).suffix.lower()]
    out = table.copy()
    if fmt == "ascii.csv":
        out.meta = {}
    if fmt == "fits":
        for name in out.colnames:
            col = out[name]
            if getattr(col, "unit", None) is not None:   # Time columns have no unit
                try:
                    col.unit.to_string("fits")
                except ValueError:
                    col.description = f"{col.description or name} [{col.unit.to_string()}]"
                    col.unit = None
        out.meta = {"SNRKIT": json.dumps(jsonable(dict(table.meta)), separators=(",", ":"))}
    with contextlib.ExitStack() as stack:
        if any(col.__class__.__name__ == "Time" for col in out.itercols()):
            # UTC Time columns are formatted by ERFA, which warns past its leap-second table
            from ..planning.calendar import offline_time
            stack.enter_context(offline_time())
        with atomic_path(path) as tmp:
            out.write(tmp, format=fmt, overwrite=True)


def add_target_options(p, transits_help="largest number of transits considered (default 500)"):
    """``--sigma`` and ``--max-transits``, the same in every command that counts transits."""
    p.add_argument("--sigma", type=float, default=5.0, help="target significance (default 5)")
    p.add_argument("--max-transits", type=int, default=500, metavar="N", help=transits_help)


def today_utc():
    """Today's date in UTC (YYYY-MM-DD), the default start of a calendar search."""
    import datetime
    return datetime.datetime.now(datetime.timezone.utc).date().isoformat()


def one_mode(args, command):
    """The single --mode of a command that takes one (None: the system file's)."""
    modes = list(dict.fromkeys(getattr(args, "mode", None) or []))
    if len(modes) > 1:
        from ..errors import InputError
        raise InputError("--mode", ", ".join(modes),
                         f"one mode for `snrkit {command}` (`snrkit transits` and `snrkit rank` "
                         "compare several)")
    return modes[0] if modes else None
