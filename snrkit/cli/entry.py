"""The ``snrkit`` command line.

Conventions for every command: human-readable tables on stdout, warnings on
stderr, ``--json`` prints exactly one JSON object on stdout and nothing else
there; exit status 0 on success, 2 on bad input, 1 on an internal error.

Each command lives in its own module in :mod:`snrkit.cli` with two
functions, ``add_parser(subparsers)`` and ``run(args) -> int``, and is
listed in ``COMMANDS`` below.  Command modules are imported lazily so that
``snrkit --help`` starts fast; they call the public science functions and
never compute science themselves.
"""

import argparse
import importlib
import sys
import warnings

from .._version import __version__

__all__ = ["main", "COMMANDS"]

#: command name -> (module in snrkit.cli, one-line help)
COMMANDS = {
    "describe": ("describe", "inputs and derived quantities of a system file"),
    "demo": ("demo", "run snrkit on the embedded invented demo systems"),
    "presets": ("presets", "list the shipped presets (scenarios, instrument modes)"),
    "precision": ("precision", "per-bin transit-depth precision for an instrument mode"),
    "limits": ("limits", "brightest usable and floor-limited magnitudes of instrument modes"),
    "calendar": ("calendar", "transit windows and their observability for a system file"),
    "spectrum": ("spectrum", "transmission spectra of atmosphere scenarios"),
    "transits": ("transits", "transits needed to detect an atmosphere, a gas, or reject a scenario"),
    "contrast": ("contrast", "transits needed to tell each pair of scenarios apart"),
    "rank": ("rank", "rank a catalogue of planets by the time they need"),
    "plan": ("plan", "the observing programme: transits, dated windows, hours, years"),
    "report": ("report", "one self-contained HTML report of targets and a catalogue"),
    "yields": ("yields", "how many planets of a population each telescope design characterises"),
}


class _UsageError(Exception):
    """An argparse usage error, turned into one ``error:`` line."""


class _Parser(argparse.ArgumentParser):
    """ArgumentParser whose usage errors are one line: option, value, what is allowed."""

    def error(self, message):
        raise _UsageError(_usage_line(message, self))


_TYPE_WORDS = {"float": "a number", "int": "a whole number"}


def _usage_line(message, parser):
    """``--opt: got 'x'; allowed: ...`` from an argparse message (one line)."""
    import re
    m = re.match(r"argument (\S+?)(?:/\S+)?: invalid (\w+) value: (.*)$", message)
    if m:
        opt, kind, got = m.groups()
        allowed = _TYPE_WORDS.get(kind, kind)
        if opt == "--sigma":
            allowed += " > 0"
        return f"{opt}: got {got}; allowed: {allowed}"
    m = re.match(r"argument (\S+?)(?:/\S+)?: invalid choice: (\S+) \(choose from (.*)\)$", message)
    if m:
        opt, got, choices = m.groups()
        return f"{opt}: got {got}; allowed: one of {choices}"
    m = re.match(r"argument (\S+?)(?:/\S+)?: expected (.*)$", message)
    if m:
        return f"{m.group(1)}: got no value; allowed: {m.group(2)}"
    m = re.match(r"the following arguments are required: (.*)$", message)
    if m:
        return f"{m.group(1)}: got nothing; allowed: a value (required; see {parser.prog} --help)"
    m = re.match(r"unrecognized arguments: (.*)$", message)
    if m:
        return (f"{m.group(1)}: got an unknown option; allowed: the options listed by "
                f"{parser.prog} --help")
    return " ".join(message.split())


def _build_parser(selected=None):
    parser = _Parser(
        prog="snrkit",
        description=("Planning estimates for transmission spectroscopy: feature "
                     "depths, photon noise, transits needed, ranking and calendars."),
        epilog="Planning estimates only; official observatory tools govern real proposals.")
    parser.add_argument("--version", action="version", version=f"snrkit {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help="show a full traceback on internal errors")
    parser.add_argument("--allow-unusual", action="store_true",
                        help="accept planet and star values outside the usual ranges (radius "
                             "0.1 R_earth-3 R_jup, mass up to 13 M_jup, gravity 0.5-1000 m/s2, "
                             "host 0.08-100 R_sun and 0.07-150 M_sun)")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (modname, helptext) in COMMANDS.items():
        if selected is not None and name != selected:
            # Register a light placeholder so `snrkit --help` lists every command
            sub.add_parser(name, help=helptext, add_help=False)
            continue
        mod = importlib.import_module(f"snrkit.cli.{modname}")
        p = sub.add_parser(name, help=helptext, description=helptext)
        mod.add_parser(p)
        p.set_defaults(_run=mod.run)
    return parser


def _selected_command(argv):
    for arg in argv:
        if arg in COMMANDS:
            return arg
        if not arg.startswith("-"):
            return None
    return None


def _show_warning(message, category, filename, lineno, file=None, line=None):
    print(f"warning: {message}", file=sys.stderr)


def main(argv=None):
    """Entry point of the ``snrkit`` console script.

    Parameters
    ----------
    argv : list of str, optional
        Arguments without the program name; defaults to ``sys.argv[1:]``.

    Returns
    -------
    int
        Exit status: 0 success, 2 bad input, 1 internal error.
    """
    argv = list(sys.argv[1:] if argv is None else argv)
    selected = _selected_command(argv)
    parser = _build_parser(selected if selected is not None else "")
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: --help/--version exit 0
        return int(exc.code or 0)
    except _UsageError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return 2
    from ..errors import SnrkitError, InputError, SnrkitWarning
    import numpy as np
    import contextlib
    unusual = contextlib.nullcontext()
    if getattr(args, "allow_unusual", False):       # system.py only when asked for
        from ..bodies.limits import allow_unusual
        unusual = allow_unusual()
    with warnings.catch_warnings(), np.errstate(all="ignore"), _signals_raise(), unusual:
        # snrkit's own warnings are messages for the user: always print them
        # on stderr, whatever filters the host process has set.  Floating-point
        # events and library warnings are not messages for the user: every
        # output is checked where it is made (NaN and inf become null or a
        # status), so they are silenced here rather than printed.
        warnings.simplefilter("ignore")
        warnings.simplefilter("always", SnrkitWarning)
        warnings.showwarning = _show_warning
        try:
            return _run_guarded(args, SnrkitError, InputError)
        except KeyboardInterrupt:
            # Ctrl-C: temporary files are already removed (atomic_path); stop quietly
            return 130
        except _Terminated as exc:
            return 128 + exc.signum


class _Terminated(BaseException):
    """Raised by the SIGTERM handler so that ``finally`` blocks remove temporary files."""

    def __init__(self, signum):
        super().__init__(signum)
        self.signum = signum


def _signals_raise():
    """Context manager: SIGTERM (and SIGHUP) raise :class:`_Terminated` while it is active."""
    import contextlib
    import signal
    import threading

    @contextlib.contextmanager
    def ctx():
        if threading.current_thread() is not threading.main_thread():
            yield
            return

        def handler(signum, frame):
            raise _Terminated(signum)
        names = [n for n in ("SIGTERM", "SIGHUP") if hasattr(signal, n)]
        old = {n: signal.signal(getattr(signal, n), handler) for n in names}
        try:
            yield
        finally:
            for n, h in old.items():
                signal.signal(getattr(signal, n), h)
    return ctx()


def _check_outputs(args):
    """Every output file option (``--out``, ``--plot``) checked before any computation."""
    from ._common import check_writable
    for opt in ("out", "plot"):
        if opt == "out" and args.command == "demo":
            continue                                   # demo --out names a folder
        value = getattr(args, opt, None)
        if isinstance(value, str) and value:
            check_writable(value, f"--{opt}")


def _run_guarded(args, SnrkitError, InputError):
    try:
        _check_outputs(args)
        return int(args._run(args) or 0)
    except BrokenPipeError:
        # the reader went away (e.g. `snrkit ... | head`): stop quietly
        import os
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except InputError as exc:
        print("error: " + " ".join(str(exc).split()), file=sys.stderr)
        return 2
    except (SnrkitError, OSError) as exc:
        import errno
        user_errors = (errno.ENOENT, errno.EISDIR, errno.EACCES, errno.EPERM, errno.ENAMETOOLONG,
                       errno.EROFS, errno.ENOSPC, errno.ENOTDIR, errno.EEXIST)
        if isinstance(exc, OSError) and exc.errno in user_errors:
            name = exc.filename if exc.filename is not None else "file"
            print("error: " + " ".join(f"{name}: got {exc.strerror or exc}; allowed: a path "
                                       "that can be used".split())[:400], file=sys.stderr)
            return 2
        if args.debug:
            raise
        print(f"internal error: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1
    except Exception as exc:  # noqa: BLE001 - last line of defence for the CLI
        if args.debug:
            raise
        print(f"internal error: {type(exc).__name__}: {exc} (rerun with --debug "
              "for a traceback)", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
