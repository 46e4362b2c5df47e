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
    """A user's value as it goes into a one-line message.

    Control and other non-printable characters are escaped (so no line break sneaks in), long
    text is cut to ``SHOWN_MAX``.

    Parameters
    ----------
    text : object
        The value.

    Returns
    -------
    str
        Printable text.

    Raises
    ------
    Exception
        Whatever ``str(text)`` raises.

    Examples
    --------
    >>> print(shown("line one\\nline two"))
    line one\\nline two

    References
    ----------
    Common practice (quoting user input in one-line diagnostics).
    """
    t = str(text)
    if not t.isprintable():
        t = t.encode("unicode_escape").decode("ascii")
    return t if len(t) <= SHOWN_MAX else t[:SHOWN_MAX] + "..."


class LibrateError(Exception):
    """Base class of every error librate raises on purpose.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> issubclass(InputError, LibrateError), LibrateError.exit_status
    (True, 1)

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    exit_status = 1


class InputError(LibrateError, ValueError):
    """A value given by the user is malformed or out of the allowed range.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> raise InputError("mu 0.7 is not in (0, 0.5]")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: mu 0.7 is not in (0, 0.5]

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    exit_status = 2


class RecordError(InputError):
    """A stored record (a leg record of the transfer graph, :data:`cr3bp.transfers.leg.RECORD_KEYS`)
    that lacks a key or holds a value of the wrong kind; the message names the key.

    Parameters
    ----------
    message : str
        One line naming the key, the value found and what is allowed.

    Examples
    --------
    >>> err = RecordError("leg record: key 'tof' is missing")
    >>> isinstance(err, InputError), err.exit_status
    (True, 2)

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """


class UnknownSystemError(InputError, KeyError):
    """A system name that is not in ``data/systems.toml``.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> str(UnknownSystemError("unknown system 'earth-mars'"))
    "unknown system 'earth-mars'"

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    def __str__(self):  # KeyError would otherwise quote the message
        return self.args[0] if self.args else ""


class UnitError(InputError):
    """A quantity whose unit the parser does not know or that has the wrong dimension.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> issubclass(UnitError, InputError)
    True

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """


class StateError(InputError):
    """A state vector that is malformed, non-finite or inside a primary.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> issubclass(StateError, InputError)
    True

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """


class EphemerisSpanError(InputError):
    """An epoch outside the span of the ephemeris asked for.

    JPL DE421: 1899-07-29 to 2053-10-09 TDB; the message names the epoch, the body and the span.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> issubclass(EphemerisSpanError, InputError), EphemerisSpanError.exit_status
    (True, 2)

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """


class NoSolutionError(LibrateError):
    """The request is well formed but nothing satisfies it (e.g. a target beyond a family's end).

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> NoSolutionError.exit_status
    3

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    exit_status = 3


class ConvergenceError(LibrateError):
    """An iterative correction did not converge. Carries its diagnostics.

    Parameters
    ----------
    message : str
        One line saying what did not converge.
    iterations : int, optional
        Iterations performed.
    residuals : sequence of float, optional
        Residual norm after each iteration.
    last : object, optional
        The last iterate (e.g. a state vector), for inspection.

    Attributes
    ----------
    iterations : int
        Iterations performed.
    residuals : list of float
        Residual norm after each iteration.
    last : object
        The last iterate, for inspection.

    Examples
    --------
    >>> e = ConvergenceError("no convergence", 3, [1e-3, 1e-5, 1e-6])
    >>> e.iterations, e.residuals[-1], e.exit_status
    (3, 1e-06, 4)

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    exit_status = 4

    def __init__(self, message, iterations=0, residuals=(), last=None):
        super().__init__(message)
        self.iterations = iterations
        self.residuals = list(residuals)
        self.last = last


class OutputError(LibrateError):
    """A result could not be written part-way through (disk full, an I/O error).

    What was being written is removed, so no partial output is left.

    Parameters
    ----------
    message : str
        One line naming the offending value and what is allowed.

    Examples
    --------
    >>> OutputError.exit_status
    1

    References
    ----------
    The Python Standard Library documentation, "Built-in Exceptions" (typed exception
    hierarchies; common practice).
    """

    exit_status = 1
