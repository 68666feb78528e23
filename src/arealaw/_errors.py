"""Exceptions raised by arealaw.

User mistakes raise :class:`ValueError` (or a subclass) with a message that names the bad value
and says what to do.  The two classes here mark the cases that are not plain bad values.
"""

__all__ = ["ZERO_MODE", "ConvergenceError", "InsufficientMemoryError", "UnsupportedMethodError"]

#: What every refusal of a potential without a positive lowest mode says, wherever it is found.
ZERO_MODE = ("a zero mode (e.g. a massless periodic or open lattice) has no normalisable ground "
             "state (divergent <q q>); add a mass > 0 or a Dirichlet wall")


class InsufficientMemoryError(MemoryError):
    """A computation was refused before allocating because its estimate exceeds free memory."""


class ConvergenceError(RuntimeError):
    """An iterative solver did not reach the requested tolerance.

    Parameters
    ----------
    message : str
        One line: what did not converge, what it reached, what to change.
    residual : float, optional
        What the solver reached, in the measure the message names (a relative residual, the
        change between refinements, or an error bound); None where no number applies.
    iterations : int, optional
        Iterations spent (CG steps, refinement levels or Lanczos blocks, as the message says).

    Examples
    --------
    >>> err = ConvergenceError("CG stopped", residual=1e-3, iterations=50)
    >>> err.residual, err.iterations
    (0.001, 50)
    """

    def __init__(self, message, *, residual=None, iterations=None):
        super().__init__(message)
        self.residual = residual
        self.iterations = iterations

    def __reduce__(self):
        # keep the attributes across processes (joblib workers pickle exceptions)
        return (type(self), self.args, self.__dict__)


class UnsupportedMethodError(ValueError):
    """The requested method cannot serve this network or region; the message names one that can."""
