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
    "UnusualValueError",
    "SnrkitWarning",
    "GrazingTransitWarning",
    "EstimatedValueWarning",
    "ExtremeValueWarning",
    "MESSAGE_PART_MAX",
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
        msg = f"{field}: got {_short(value)}; allowed: {_short(allowed, quote=False)}"
        if detail:
            msg += f" ({_short(detail, quote=False)})"
        super().__init__(" ".join(msg.split()))

    def __reduce__(self):
        # picklable with its own arguments, so that an error raised in a dask
        # worker reaches the command line as the same one-line InputError
        return (type(self), (self.field, self.value, self.allowed, self.detail))


#: Longest text of a value, allowed range or detail in a message (a longer one
#: is cut, so that an array or a nested list never floods the terminal).
MESSAGE_PART_MAX = 200


def _short(value, quote=True):
    """``repr`` (or ``str``) of ``value``, cut to :data:`MESSAGE_PART_MAX` characters."""
    try:
        text = repr(value) if quote else str(value)
    except (RecursionError, ValueError):  # a pathologically nested value
        text = f"<{type(value).__name__}>"
    if len(text) > MESSAGE_PART_MAX:
        text = text[:MESSAGE_PART_MAX - 5] + " ...)"
    return text


class UnitMismatchError(InputError):
    """A value carries an unknown unit or a unit of the wrong dimension."""


class UnknownKeyError(InputError):
    """A file or mapping holds a key snrkit does not know."""


class NoTransitError(InputError):
    """The geometry gives no transit (impact parameter >= 1 + Rp/Rs)."""


class UnusualValueError(InputError):
    """A physically possible value outside the range expected of a planet or its host
    (most often a unit mistake); ``--allow-unusual`` lets it through."""


class SnrkitWarning(UserWarning):
    """Base class of snrkit warnings."""


class GrazingTransitWarning(SnrkitWarning):
    """The planet's disc never lies wholly inside the stellar disc (T23 = 0)."""


class EstimatedValueWarning(SnrkitWarning):
    """A missing input was estimated from a published relation."""


class ExtremeValueWarning(SnrkitWarning):
    """A valid but extreme input makes an answer questionable (the answer is given)."""
