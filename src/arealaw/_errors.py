"""Exceptions raised by arealaw.

User mistakes raise :class:`ValueError` (or a subclass) with a message that names the bad value
and says what to do.  The two classes here mark the cases that are not plain bad values.
"""

__all__ = ["ConvergenceError", "InsufficientMemoryError", "UnsupportedMethodError"]


class InsufficientMemoryError(MemoryError):
    """A computation was refused before allocating because its estimate exceeds free memory."""


class ConvergenceError(RuntimeError):
    """An iterative solver did not reach the requested tolerance; the message gives the residual."""


class UnsupportedMethodError(ValueError):
    """The requested method cannot serve this network or region; the message names one that can."""
