"""Exception and warning types raised by snrkit.

Every error about user input is an :class:`InputError` (a ``ValueError``)
that names the offending field, the value received and what is allowed, so
the command line can print one line and exit with status 2.
"""

__all__ = [
    "SnrkitError",
    "InputError",
    "UnitMismatchError",
    "UnknownKeyError",
    "NoTransitError",
    "SnrkitWarning",
    "GrazingTransitWarning",
    "EstimatedValueWarning",
]


class SnrkitError(Exception):
    """Base class of all snrkit errors."""


class InputError(SnrkitError, ValueError):
    """A user-supplied value is missing, malformed or out of range.

    Parameters
    ----------
    field : str
        Name of the offending input, as the user wrote it (for example
        ``"planet.radius"``).
    value : object
        The value received.
    allowed : str
        Plain description of what is allowed (a range, a unit, a list).
    detail : str, optional
        Extra explanation appended to the message.
    """

    def __init__(self, field, value, allowed, detail=""):
        self.field = field
        self.value = value
        self.allowed = allowed
        self.detail = detail
        msg = f"{field}: got {value!r}; allowed: {allowed}"
        if detail:
            msg += f" ({detail})"
        super().__init__(msg)


class UnitMismatchError(InputError):
    """A value carries an unknown unit or a unit of the wrong dimension."""


class UnknownKeyError(InputError):
    """A file or mapping holds a key snrkit does not know."""


class NoTransitError(InputError):
    """The geometry gives no transit (impact parameter >= 1 + Rp/Rs)."""


class SnrkitWarning(UserWarning):
    """Base class of snrkit warnings."""


class GrazingTransitWarning(SnrkitWarning):
    """The planet's disc never lies wholly inside the stellar disc (T23 = 0)."""


class EstimatedValueWarning(SnrkitWarning):
    """A missing input was estimated from a published relation."""
