"""Exceptions and warnings raised by eosfill.

One base class, :class:`EosfillError`.  :class:`InputError` says which input
is wrong and why; :class:`ConvergenceError` carries the solver's last iterate
and residual.  :class:`RangeWarning` is issued when a correlation is used
outside its fitted range (never silence, never an error).
"""
from __future__ import annotations


class EosfillError(Exception):
    """Base class of every error raised by eosfill."""


class InputError(EosfillError, ValueError):
    """An input is outside its allowed range or of the wrong kind.

    Parameters
    ----------
    name : str
        Argument or key that is wrong (for scenario files, the key path).
    value : object
        The value given.
    allowed : str
        The allowed range or kinds, in words.
    """

    def __init__(self, name: str, value=None, allowed: str = "", message: str | None = None):
        self.name = name
        self.value = value
        self.allowed = allowed
        if message is None:
            message = f"{name} = {value!r} is not allowed"
            if allowed:
                message += f"; allowed: {allowed}"
        super().__init__(message)


class ConvergenceError(EosfillError, RuntimeError):
    """A solver did not converge.

    Attributes
    ----------
    solver : str
        Which solver failed.
    last_iterate : dict
        The solver's last iterate (named values, SI units).
    residual : float
        The residual at the last iterate.
    """

    def __init__(self, solver: str, message: str, last_iterate=None, residual=None):
        self.solver = solver
        self.last_iterate = dict(last_iterate or {})
        self.residual = residual
        text = f"{solver}: {message}"
        if self.last_iterate:
            parts = ", ".join(f"{k}={v!r}" for k, v in self.last_iterate.items())
            text += f" (last iterate: {parts}"
            if residual is not None:
                text += f"; residual {residual!r}"
            text += ")"
        super().__init__(text)


class RangeWarning(UserWarning):
    """A correlation was evaluated outside the range it was fitted on."""


class LimitWarning(UserWarning):
    """A computed value passed a safety limit (temperature, pressure, fill density)."""


# --------------------------------------------------------------------------
# per-element solver status (scipy-style): every batch solver returns one of
# these per element, State carries them, vessel and time-resolved results keep
# the worst status of the states they used.  Ordered: a larger code is worse.
# --------------------------------------------------------------------------
CONVERGED = 0       #: converged and verified against its specification
OUT_OF_RANGE = 1    #: a correlation or input was outside its range (result computed; RangeWarning issued)
NO_SOLUTION = 2     #: the specification has no solution for this model (no NaN returned in its place silently)
NOT_CONVERGED = 3   #: the solver stopped at its iteration limit or its result failed verification

STATUS_TEXT = {
    CONVERGED: "converged",
    OUT_OF_RANGE: "out of range",
    NO_SOLUTION: "no solution",
    NOT_CONVERGED: "not converged",
}


def worst_status(*statuses) -> int:
    """The worst (largest) status code among scalars or arrays of codes (None is skipped)."""
    worst = CONVERGED
    for s in statuses:
        if s is None:
            continue
        if isinstance(s, int):            # the common case of one code: no numpy
            worst = max(worst, s)
            continue
        import numpy as np

        if np.size(s) > 0:
            worst = max(worst, int(np.max(np.asarray(s))))
    return int(worst)
