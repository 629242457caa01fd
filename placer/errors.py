"""Exception and warning types used across placer.

Bad input is a :class:`SpecError` (a ``ValueError``), an output that
cannot be written an :class:`OutputError`; a target that a
topology cannot reach is an :class:`UnreachableTarget`, which carries the
reason in words and the library topologies that could reach it.
:func:`brief` shows a user's value in a message, cut to a readable length.
"""

from collections.abc import Iterable
from typing import Any

__all__ = [
    "brief",
    "brief_path",
    "PlacerError",
    "SpecError",
    "OutputError",
    "TopologyError",
    "UnreachableTarget",
    "SymbolicSizeError",
    "NumericalWarning",
]


class PlacerError(Exception):
    """Base class of every error placer raises on purpose."""


class SpecError(PlacerError, ValueError):
    """Bad input: a spec, topology or circuit file, a field or an argument.

    The message names the file, field or element at fault and says what
    would be accepted. It is one line: line breaks in it (from a file name,
    say) are shown as ``\\n``.
    """

    def __init__(self, message: object = "", *args: object) -> None:
        text = str(message).replace("\r", "\\r").replace("\n", "\\n")
        super().__init__(text, *args)


#: The longest a user's value is shown in a message, in characters.
BRIEF_LENGTH = 60


def brief(value: Any, limit: int = BRIEF_LENGTH, *, quote: bool = True) -> str:
    """A user's value for a message: its repr (or str), cut to `limit`.

    Examples
    --------
    >>> brief("x" * 100)
    "'xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx..."
    >>> brief(["lowpass"]), brief("C1", quote=False)
    ("['lowpass']", 'C1')
    """
    try:
        text = repr(value) if quote else str(value)
    except RecursionError:
        return "<a value nested too deeply to show>"
    return text if len(text) <= limit else text[:limit - 3] + "..."


class OutputError(SpecError):
    """An output that cannot be written: a missing or read-only folder, a
    full disk, a path that names a folder or one of the run's inputs.

    The message names the option, the path and the reason, on one line;
    the command exits 2 as for bad input.
    """


class TopologyError(SpecError):
    """A topology or circuit description that cannot be analysed."""


class UnreachableTarget(PlacerError):
    """A target that a topology (or every candidate) cannot realise.

    Parameters
    ----------
    reason : str
        Why, in words a designer reads (for example "a passive RC network
        has only real poles, so Q <= 0.5").
    alternatives : sequence of str, optional
        Library topology ids that can reach the target.
    """

    def __init__(self, reason: object, alternatives: Iterable[str] = ()) -> None:
        self.reason = str(reason)
        self.alternatives = tuple(alternatives)
        message = self.reason
        if self.alternatives:
            message += "; topologies that can: " + ", ".join(self.alternatives)
        super().__init__(message)


class SymbolicSizeError(PlacerError):
    """A symbolic derivation stopped because it grew past a term limit.

    Attributes
    ----------
    terms : int
        Terms the derivation held when it stopped.
    limit : int
        The limit it was given.
    """

    def __init__(self, terms: int, limit: int) -> None:
        self.terms = int(terms)
        self.limit = int(limit)
        super().__init__(
            f"the symbolic network function is too large: the derivation held {self.terms} "
            f"terms, more than the limit of {self.limit}"
        )


class NumericalWarning(UserWarning):
    """Numerical trouble: ill-conditioning, a root finder that lost accuracy."""


def brief_path(path: Any, *, quote: bool = False) -> str:
    """A file path for a message; one past 160 characters keeps its ends.

    Examples
    --------
    >>> brief_path("/tmp/" + "d" * 300 + "/spec.toml")[-13:]
    'ddd/spec.toml'
    """
    text = str(path)
    if len(text) > 160:
        text = text[:40] + "..." + text[-100:]
    return repr(text) if quote else text
