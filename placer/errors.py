"""Exception and warning types used across placer.

Bad input is a :class:`SpecError` (a ``ValueError``); a target that a
topology cannot reach is an :class:`UnreachableTarget`, which carries the
reason in words and the library topologies that could reach it.
"""

__all__ = [
    "PlacerError",
    "SpecError",
    "TopologyError",
    "UnreachableTarget",
    "NumericalWarning",
]


class PlacerError(Exception):
    """Base class of every error placer raises on purpose."""


class SpecError(PlacerError, ValueError):
    """Bad input: a spec, topology or circuit file, a field or an argument.

    The message names the file, field or element at fault and says what
    would be accepted.
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

    def __init__(self, reason, alternatives=()):
        self.reason = str(reason)
        self.alternatives = tuple(alternatives)
        message = self.reason
        if self.alternatives:
            message += "; topologies that can: " + ", ".join(self.alternatives)
        super().__init__(message)


class NumericalWarning(UserWarning):
    """Numerical trouble: ill-conditioning, a root finder that lost accuracy."""
