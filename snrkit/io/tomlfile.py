"""The one bounded TOML reader, and the check of every input path.

Every TOML file snrkit reads (system files, scenario files, instrument-mode
files, catalogue mappings, shipped presets) goes through :func:`read_toml`
or :func:`loads_toml`.  They turn every way a file can be unreadable into an
:class:`~snrkit.errors.InputError` naming the field and the file:

* a path component longer than :data:`NAME_MAX_BYTES` bytes or a path longer
  than :data:`PATH_MAX_BYTES` (checked before the file system is asked);
* a missing file, a folder, a file that may not be read;
* a file larger than :data:`MAX_BYTES`;
* bytes that are not UTF-8;
* TOML syntax errors, integers beyond the interpreter's digit limit;
* arrays or inline tables nested deeper than :data:`MAX_DEPTH` (deeper
  nesting is refused before parsing, so no ``RecursionError`` can occur).

Numbers inside the document are checked where they are used, by
:func:`snrkit.units.parse_number` and :func:`snrkit.units.to_si`.
"""

import errno
import os
import tomllib
from pathlib import Path

from ..errors import InputError

__all__ = ["read_toml", "loads_toml", "check_input_path", "MAX_DEPTH", "MAX_BYTES",
           "NAME_MAX_BYTES", "PATH_MAX_BYTES"]

#: Deepest nesting of arrays and inline tables accepted in a TOML file (the
#: deepest snrkit's own layouts need is 3; common practice, no source).
MAX_DEPTH = 16
#: Largest TOML file read [bytes].
MAX_BYTES = 16 * 1024 * 1024
#: Longest file or folder name (one path component) [bytes], as on common
#: Linux and macOS file systems.
NAME_MAX_BYTES = 255
#: Longest whole path [bytes] (Linux PATH_MAX - 1).
PATH_MAX_BYTES = 4095


def check_input_path(path, field, what="a file"):
    """Refuse a path the file system cannot handle, before any use of it.

    Parameters
    ----------
    path : str or pathlib.Path
        The path the user gave.
    field : str
        Name of the option or key, for the message.
    what : str
        What the path should name, for the message ("an existing mode file").

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        A path component longer than :data:`NAME_MAX_BYTES` bytes, a path
        longer than :data:`PATH_MAX_BYTES` bytes, or a NUL character.
    """
    text = os.fspath(path)
    if "\x00" in str(text):
        raise InputError(field, _show(text), f"{what} (a path without NUL characters)")
    raw = os.fsencode(text)
    if len(raw) > PATH_MAX_BYTES:
        raise InputError(field, _show(text), f"{what} with a path of at most "
                         f"{PATH_MAX_BYTES} bytes", detail=f"it has {len(raw)}")
    longest = max((len(part) for part in raw.split(b"/")), default=0)
    if longest > NAME_MAX_BYTES:
        raise InputError(field, _show(text), f"{what} whose file and folder names have at "
                         f"most {NAME_MAX_BYTES} bytes", detail=f"one has {longest}")
    return Path(text)


def _show(text, limit=60):
    text = str(text)
    return text if len(text) <= limit else text[:limit - 3] + "..."


def read_toml(path, field, what="an existing TOML file"):
    """Read and parse a TOML file within the limits of this module.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    field : str
        Name of the option or key that gave the path (for messages).
    what : str
        What is allowed, for the message of a missing file.

    Returns
    -------
    dict
        The parsed document.

    Raises
    ------
    InputError
        See the module docstring.
    """
    p = check_input_path(path, field, what)
    try:
        size = p.stat().st_size
        if size > MAX_BYTES:
            raise InputError(field, str(p), f"a TOML file of at most {MAX_BYTES} bytes",
                             detail=f"it has {size}")
        raw = p.read_bytes()
    except FileNotFoundError:
        raise InputError(field, str(p), what) from None
    except IsADirectoryError:
        raise InputError(field, str(p), "a file, not a folder") from None
    except PermissionError:
        raise InputError(field, str(p), "a file you may read") from None
    except OSError as exc:
        if exc.errno == errno.ENAMETOOLONG:
            raise InputError(field, _show(p), f"{what} with a shorter path") from None
        raise InputError(field, str(p), "a readable file", detail=exc.strerror or "") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(field, str(p), "a UTF-8 text file (TOML)",
                         detail=f"byte {exc.start} cannot be decoded") from None
    return loads_toml(text, field, source=str(p))


def loads_toml(text, field, source="<text>"):
    """Parse TOML text within the nesting limit.

    Parameters
    ----------
    text : str
        TOML text.
    field : str
        Name used in messages.
    source : str
        File name (or ``"<text>"``), used in messages.

    Returns
    -------
    dict
    """
    if not isinstance(text, str):
        raise InputError(field, type(text).__name__, "TOML text")
    if "\x00" in text:
        raise InputError(field, source, "a valid TOML file",
                         detail="it holds a NUL character")
    depth, line = _nesting_depth(text)
    if depth > MAX_DEPTH:
        raise InputError(field, source, f"a TOML file with arrays and inline tables nested "
                         f"at most {MAX_DEPTH} deep", detail=f"line {line} is nested {depth} deep")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        hint = ""
        if str(source).lower().endswith((".ecsv", ".csv", ".vot", ".xml", ".fits")):
            hint = "; this looks like a catalogue table: rank it with `snrkit rank`"
        raise InputError(field, source, "a valid TOML file", detail=f"{exc}{hint}") from None
    except (ValueError, RecursionError, MemoryError) as exc:
        # ValueError: an integer beyond the interpreter's digit limit
        raise InputError(field, source, "a valid TOML file",
                         detail=f"{type(exc).__name__}: {exc}") from None


def _nesting_depth(text):
    """Deepest nesting of ``[``/``{`` inside values, and its line (an upper bound).

    Table headers (``[star]``, ``[[planet]]``) start a line and are skipped;
    strings and comments are skipped.  The scan may over-count only on
    malformed TOML, which the parser refuses anyway.
    """
    depth = best = 0
    best_line = 1
    line = 1
    i, n = 0, len(text)
    at_line_start = True
    while i < n:
        c = text[i]
        if c == "\n":
            line += 1
            at_line_start = True
            i += 1
            continue
        if c in " \t\r":
            i += 1
            continue
        if at_line_start and depth == 0 and c == "[":
            # a table header: skip to the end of the line
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        at_line_start = False
        if c == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if c in "\"'":
            i = _skip_string(text, i)
            continue
        if c in "[{":
            depth += 1
            if depth > best:
                best, best_line = depth, line
        elif c in "]}":
            depth = max(depth - 1, 0)
        i += 1
    return best, best_line


def _skip_string(text, i):
    """Index just after the string starting at ``text[i]``."""
    q = text[i]
    triple = text.startswith(q * 3, i)
    if triple:
        end = text.find(q * 3, i + 3)
        return len(text) if end < 0 else end + 3
    j = i + 1
    while j < len(text):
        c = text[j]
        if c == "\\" and q == '"':
            j += 2
            continue
        if c == q or c == "\n":
            return j + 1
        j += 1
    return j
