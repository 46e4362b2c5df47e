"""Typed exceptions raised by the library.

The CLI maps them to exit statuses (documented in the user guide, docs/manual/usage.md):

========================  ======  =============================================
exception                 status  meaning
========================  ======  =============================================
``InputError``            2       a value the user gave is not allowed
``NoSolutionError``       3       the request is well formed but has no answer
``ConvergenceError``      4       an iteration did not converge
``OutputError``           1       a result could not be written (disk full, I/O)
========================  ======  =============================================

Messages are one line and name the offending value and what is allowed.
"""


#: Characters of a rejected value quoted back in a message.
SHOWN_MAX = 60


def shown(text) -> str:
    """A user's value as it goes into a one-line message: control and other non-printable
    characters escaped (so no line break sneaks in), long text cut to ``SHOWN_MAX``."""
    t = str(text)
    if not t.isprintable():
        t = t.encode("unicode_escape").decode("ascii")
    return t if len(t) <= SHOWN_MAX else t[:SHOWN_MAX] + "..."


class LibrateError(Exception):
    """Base class of every error librate raises on purpose."""

    exit_status = 1


class InputError(LibrateError, ValueError):
    """A value given by the user is malformed or out of the allowed range."""

    exit_status = 2


class RecordError(InputError):
    """A stored record (a leg record of the transfer graph, :data:`cr3bp.transfers.leg.RECORD_KEYS`)
    that lacks a key or holds a value of the wrong kind; the message names the key."""


class UnknownSystemError(InputError, KeyError):
    """A system name that is not in ``data/systems.toml``."""

    def __str__(self):  # KeyError would otherwise quote the message
        return self.args[0] if self.args else ""


class UnitError(InputError):
    """A quantity whose unit the parser does not know or that has the wrong dimension."""


class StateError(InputError):
    """A state vector that is malformed, non-finite or inside a primary."""


class EphemerisSpanError(InputError):
    """An epoch outside the span of the ephemeris asked for (JPL DE421: 1899-07-29 to
    2053-10-09 TDB); the message names the epoch, the body and the span."""


class NoSolutionError(LibrateError):
    """The request is well formed but nothing satisfies it (e.g. a target beyond a family's end)."""

    exit_status = 3


class ConvergenceError(LibrateError):
    """An iterative correction did not converge. Carries its diagnostics.

    Attributes
    ----------
    iterations : int
        Iterations performed.
    residuals : list of float
        Residual norm after each iteration.
    last : object
        The last iterate (e.g. a state vector), for inspection.
    """

    exit_status = 4

    def __init__(self, message, iterations=0, residuals=(), last=None):
        super().__init__(message)
        self.iterations = iterations
        self.residuals = list(residuals)
        self.last = last


class OutputError(LibrateError):
    """A result could not be written part-way through (disk full, an I/O error); what was
    being written is removed, so no partial output is left."""

    exit_status = 1
