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
