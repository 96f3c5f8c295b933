"""The ``snrkit`` command line.

Conventions for every command: human-readable tables on stdout, warnings on
stderr, ``--json`` prints exactly one JSON object on stdout and nothing else
there; exit status 0 on success, 2 on bad input, 1 on an internal error.

Each command lives in its own module in :mod:`snrkit.commands` with two
functions, ``add_parser(subparsers)`` and ``run(args) -> int``, and is
listed in ``COMMANDS`` below.  Command modules are imported lazily so that
``snrkit --help`` starts fast; they call the public science functions and
never compute science themselves.
"""

import argparse
import importlib
import sys
import warnings

from ._version import __version__

__all__ = ["main", "COMMANDS"]

#: command name -> (module in snrkit.commands, one-line help)
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
}


def _build_parser(selected=None):
    parser = argparse.ArgumentParser(
        prog="snrkit",
        description=("Planning estimates for transmission spectroscopy: feature "
                     "depths, photon noise, transits needed, ranking and calendars."),
        epilog="Planning estimates only; official observatory tools govern real proposals.")
    parser.add_argument("--version", action="version", version=f"snrkit {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help="show a full traceback on internal errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (modname, helptext) in COMMANDS.items():
        if selected is not None and name != selected:
            # Register a light placeholder so `snrkit --help` lists every command
            sub.add_parser(name, help=helptext, add_help=False)
            continue
        mod = importlib.import_module(f"snrkit.commands.{modname}")
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
    except SystemExit as exc:  # argparse: --help/--version exit 0, usage errors 2
        return int(exc.code or 0)
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return 2
    from .errors import SnrkitError, InputError, SnrkitWarning
    with warnings.catch_warnings():
        # snrkit's own warnings are messages for the user: always print them
        # on stderr, whatever filters the host process has set.
        warnings.simplefilter("always", SnrkitWarning)
        warnings.showwarning = _show_warning
        return _run_guarded(args, SnrkitError, InputError)


def _run_guarded(args, SnrkitError, InputError):
    try:
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
        if isinstance(exc, (FileNotFoundError, IsADirectoryError, PermissionError)):
            print(f"error: {exc}", file=sys.stderr)
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
