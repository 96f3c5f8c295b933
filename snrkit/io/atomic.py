"""Atomic output files: write to a temporary file beside the target, then rename.

A crash part-way through never leaves a half-written output file.  The
temporary file is named ``.<name>.<pid>.snrkit-partial<suffix>``: if the
process is killed outright (SIGKILL, a power cut) and the file is left
behind, the next atomic write in that folder removes it, because no running
process has that id (:func:`remove_stale_partials`).  SIGTERM and SIGINT
are turned into exceptions by the command line, so the ``except`` below
removes the temporary file before the process exits.
"""

import contextlib
import os
import tempfile
from pathlib import Path

__all__ = ["atomic_path", "atomic_write_text", "remove_stale_partials", "PARTIAL_MARK"]

#: Marker in the names of temporary output files.
PARTIAL_MARK = ".snrkit-partial"


def _pid_alive(pid):
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True            # some other user's live process
    return True


def remove_stale_partials(folder):
    """Remove temporary output files left in ``folder`` by processes that no longer run.

    Parameters
    ----------
    folder : str or pathlib.Path

    Returns
    -------
    list of pathlib.Path
        The files removed.
    """
    removed = []
    try:
        entries = list(Path(folder).glob(f".*{PARTIAL_MARK}*"))
    except OSError:
        return removed
    for f in entries:
        stem = f.name.split(PARTIAL_MARK)[0]          # ".<name>.<pid>"
        pid_text = stem.rsplit(".", 1)[-1]
        if not pid_text.isdigit() or _pid_alive(int(pid_text)):
            continue
        try:
            f.unlink()
            removed.append(f)
        except OSError:
            pass
    return removed


@contextlib.contextmanager
def atomic_path(path):
    """Context manager yielding a temporary path that replaces ``path`` on success.

    The final file gets the permissions of a newly created file (the user's
    umask), like a plain ``open(path, "w")``.

    Parameters
    ----------
    path : str or pathlib.Path
        Final destination.  Its folder must exist.

    Examples
    --------
    >>> with atomic_path("out.ecsv") as tmp:          # doctest: +SKIP
    ...     table.write(tmp, format="ascii.ecsv")
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        from ..errors import InputError
        raise InputError("output file", str(path), "a file in an existing folder")
    remove_stale_partials(parent)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name[:120]}.{os.getpid()}{PARTIAL_MARK}",
                               suffix=path.suffix or ".tmp", dir=str(parent))
    os.close(fd)
    tmp = Path(tmp)
    try:
        yield tmp
        _umask_mode(tmp)
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def _umask_mode(tmp):
    """Give ``tmp`` the mode a new file gets (mkstemp makes it 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    with contextlib.suppress(OSError):
        os.chmod(tmp, 0o666 & ~mask)


def atomic_write_text(path, text):
    """Write ``text`` to ``path`` atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text)
