"""The one backend protocol: correlator blocks X[rows, cols], P[rows, cols] with error bounds."""

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse.linalg as spla

from .._numerics import EPS

__all__ = ["Assessment", "Blocks", "CorrelatorBackend", "RegionOperators", "apply_operator",
           "as_array", "operator_trace", "trace_rounding"]


def as_array(op):
    """The dense matrix behind ``op`` if it has one (ndarray or a wrapped ndarray), else None.

    Examples
    --------
    >>> import numpy as np, scipy.sparse.linalg as spla
    >>> from arealaw.correlators import as_array
    >>> as_array(spla.aslinearoperator(np.eye(2))).shape, as_array(spla.LinearOperator(
    ...     (2, 2), matvec=lambda v: v)) is None
    ((2, 2), True)
    """
    if isinstance(op, np.ndarray):
        return op
    a = getattr(op, "A", None)
    return a if isinstance(a, np.ndarray) else None


def apply_operator(op, arr, v):
    """op·v, through the dense matrix ``arr`` (from :func:`as_array`) when there is one.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.correlators import apply_operator
    >>> apply_operator(None, 2 * np.eye(2), np.ones(2)).tolist()
    [2.0, 2.0]
    """
    return arr @ v if arr is not None else np.asarray(op.matmat(v))


def operator_trace(x, p, *, block_size=256):
    """Σ t = tr(X_A P_A) − n/4 and a bound on its rounding error.

    Dense blocks give Σ_ij x_ij p_ij directly; general operators are applied to blocks of unit
    vectors (2n products: use only when no cheaper trace is known).  Row sums are formed with ¼
    already subtracted, so the small total does not cancel against n/4.

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw.correlators import operator_trace
    >>> s, err = operator_trace(np.eye(3), np.eye(3))
    >>> float(s), bool(err < 1e-14)
    (2.25, True)
    """
    xa, pa = as_array(x), as_array(p)
    n = x.shape[0]
    rows = np.empty(n)
    absrows = np.empty(n)
    for s in range(0, n, block_size):
        e = min(n, s + block_size)
        if xa is not None and pa is not None:
            prod = xa[s:e] * pa[s:e]
        else:
            unit = np.zeros((n, e - s))
            unit[np.arange(s, e), np.arange(e - s)] = 1.0
            prod = (apply_operator(x, xa, unit) * apply_operator(p, pa, unit)).T
        rows[s:e] = prod.sum(axis=1) - 0.25
        absrows[s:e] = np.abs(prod).sum(axis=1) + 0.25
    return float(rows.sum()), trace_rounding(n, float(absrows.sum()))


def trace_rounding(n, abs_total):
    """Rounding bound of a trace summed as n row sums of n terms (``abs_total`` = Σ|terms|)."""
    # pairwise summation: error ≤ (log2 terms + 2)·ε·Σ|terms| for each of the two levels
    return 2.0 * (math.log2(max(n, 2)) + 3.0) * EPS * abs_total


@dataclass
class Blocks:
    """Correlator blocks and bounds on their errors.

    ``x_error`` and ``p_error`` bound the spectral norm of ``X_exact - x`` and ``P_exact - p``
    (from approximation and solver tolerances; rounding included where the backend can say).
    ``info`` carries backend diagnostics (poles, iterations, spectral interval, ...).
    ``x_dominant``, ``p_dominant`` (optional, square blocks only) are positive semi-definite H
    with −H ⪯ X_exact − x ⪯ H in Loewner order: errors relative to the actual matrices, which the
    spectrum propagates through tr(H P) instead of ‖X‖·δP (much tighter on massless lattices).
    When given, they replace ``x_error``/``p_error`` in the spectrum's bounds.
    ``entry_x_error`` and ``entry_p_error`` bound the error of any single entry, where the
    backend can say (None otherwise); methods that assemble other blocks from the entries (parity
    sectors) need them.
    """

    x: np.ndarray
    p: np.ndarray
    x_error: float = 0.0
    p_error: float = 0.0
    info: dict = field(default_factory=dict)
    x_dominant: np.ndarray = None
    p_dominant: np.ndarray = None
    entry_x_error: float = None
    entry_p_error: float = None


@dataclass
class RegionOperators:
    """X_A and P_A of one region as operators (only products are used), with error bounds.

    ``trace`` is (tr(X_A P_A) − n/4, bound on its error) where the backend can form it without
    products (the restricted solver needs it; otherwise it costs 2n products).
    ``entry_x_error``, ``entry_p_error`` bound the error of any single entry of the operators'
    matrices where the backend can say (None otherwise); ``operator_rounding`` = (r_x, r_p)
    bounds, in spectral norm, what the products add beyond those entries (FFT rounding), and is
    given only when ``trace`` already holds the entry errors.
    """

    x: spla.LinearOperator
    p: spla.LinearOperator
    x_error: float = 0.0
    p_error: float = 0.0
    info: dict = field(default_factory=dict)
    trace: tuple = None
    entry_x_error: float = None
    entry_p_error: float = None
    operator_rounding: tuple = None


@dataclass
class Assessment:
    """A backend's answer to "can you serve this, and at what cost?"."""

    ok: bool
    reason: str
    bytes: float = 0.0
    seconds: float = 0.0


class CorrelatorBackend:
    """Base class of correlator backends.

    A backend answers one question: given a network and index arrays ``rows`` and ``cols``,
    return :class:`Blocks` holding ``X[rows, cols]`` and ``P[rows, cols]`` with error bounds.
    Subclasses implement :meth:`assess` and :meth:`blocks`; :meth:`operators` has a default that
    forms the region block, and backends that can apply X_A and P_A without forming them override
    it (for matrix-free restricted spectra).  Every call takes ``temperature`` (T ≥ 0, default 0:
    the ground state) and returns the correlators of the Gibbs state exp(−H/T); a backend that
    cannot serve some T says so in :meth:`assess` and raises UnsupportedMethodError.
    """

    #: Method name used by ``method=`` and ``--method``.
    name = "abstract"

    def assess(self, network, n_rows, *, tol, temperature=0.0):
        """Return an :class:`Assessment` for blocks of ``n_rows`` sites of ``network``."""
        raise NotImplementedError

    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        """Return :class:`Blocks` with X[rows, cols], P[rows, cols] (``cols`` defaults to rows)."""
        raise NotImplementedError

    def operators(self, network, rows, *, tol, temperature=0.0):
        """Return :class:`RegionOperators` for the region ``rows`` (default: its dense blocks)."""
        b = self.blocks(network, rows, tol=tol, temperature=temperature)
        return RegionOperators(spla.aslinearoperator(b.x), spla.aslinearoperator(b.p),
                               b.x_error, b.p_error, b.info, trace=operator_trace(b.x, b.p),
                               entry_x_error=b.entry_x_error, entry_p_error=b.entry_p_error)

    def operator_bytes(self, network, rows):
        """Memory that :meth:`operators` needs for the region ``rows`` (default: dense blocks)."""
        return 16.0 * float(np.asarray(rows).size) ** 2

    def __repr__(self):
        return f"<{type(self).__name__} {self.name!r}>"
