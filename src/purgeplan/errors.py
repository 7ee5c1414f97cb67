"""Exceptions that name the field at fault and the fix, and the statuses every solve ends in.

The CLI maps :class:`CaseError` to exit status 2, :class:`InfeasibleError` to
exit status 3 and :class:`SolverFailure` to exit status 4.
"""

from __future__ import annotations

import enum


class Status(enum.Enum):
    """How the solve of one alternative (or one LP) ended."""

    OPTIMAL = "optimal"
    INFEASIBLE = "infeasible"
    TIME_LIMIT = "time limit"
    FAILED = "failed"


class CaseError(ValueError):
    """A case file that cannot be read or does not validate.

    Parameters
    ----------
    path : str
        Key path in the case file, such as ``loop.pressure_bar``.
    message : str
        What was found and what was expected.
    value : str, optional
        The offending value as written, shown after the path.
    """

    def __init__(self, path: str, message: str, value: str | None = None):
        self.path = path
        self.message = message
        where = f"{path} = {value}" if value is not None else path
        super().__init__(f"{where}: {message}" if where else message)


class NoSteadyStateError(ArithmeticError):
    """The loop has no (physical) steady state for the given design variables."""


class InfeasibleError(RuntimeError):
    """A valid case whose limits cannot all be met."""


class SolverFailure(RuntimeError):
    """The solver did not return an optimal solution for a reason of its own.

    ``status`` is :attr:`Status.TIME_LIMIT` when a time limit stopped it,
    otherwise :attr:`Status.FAILED`.
    """

    def __init__(self, message: str, status: Status = Status.FAILED):
        self.status = status
        super().__init__(message)
