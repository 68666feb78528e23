"""Methods: how a region's symplectic spectrum is obtained, and the automatic choice.

A *method* turns (network, region) into a :class:`SymplecticSpectrum`.  Most methods wrap a
correlator backend (:class:`BlockMethod`): blocks X_A, P_A → stable dense eigenproblem, or, for
regions too large for that, a restricted matrix-free solver.  Symmetry reductions (partial waves,
transverse momenta) implement the same two calls directly.  ``method='auto'`` asks every method
for an :class:`~arealaw.correlators.Assessment` and takes the cheapest that can serve.
"""

import math

import numpy as np

from .._arguments import unknown_name
from .._costs import cost
from .._errors import InsufficientMemoryError, UnsupportedMethodError
from .._numerics import (MEMORY_FRACTION, available_bytes, fits_in_memory, format_bytes,
                         require_memory)
from ..network import boundary_sites
from ..spectrum._restricted import restricted_spectrum
from ..spectrum._symplectic import symplectic_spectrum
from ..correlators import Assessment, get_backend
from ..correlators._base import as_array

__all__ = ["BlockMethod", "Choice", "Method", "choose_method", "dense_spectrum_seconds",
           "method_names", "register_method"]

#: Regions above this size are sent to the restricted solver when one is registered (a dense
#: eigenproblem beyond it does not fit this machine); below it the cheaper estimate decides.
DENSE_SPECTRUM_LIMIT = 15000
#: Smallest region for which the cost estimate may pick the restricted solver.
RESTRICTED_MIN_SITES = 8000
#: ``method='auto'`` takes an approximate method (a tolerance-level result: sparse, partial-wave
#: and Brillouin-zone sums) over an exact one only when it is estimated this many times cheaper:
#: the cost estimates are good to about 3× (benchmarks/bench_costs.py), so a smaller estimated
#: gain is not a real one, and exact numbers are worth that much.
APPROXIMATE_ADVANTAGE = 3.0


def _boundary_estimate(network, indices):
    """Boundary sites of a region (from V; a d-cube estimate when V is not formed, or not yet:
    an assessment must not assemble a deferred lattice)."""
    count = None if network.is_deferred else boundary_sites(network, indices)
    if count is None:
        n = indices.size
        d = max(1, getattr(network, "ndim", 3) or 3)
        return min(n, 2 * d * n ** ((d - 1) / d))
    return count


def restricted_modes_estimate(n, boundary, tol):
    """Lanczos vectors the restricted solver needs: about (1 + 0.125·log10(1/tol))·boundary.

    Measured on 3-D balls (benchmarks/bench_restricted.py): 1.5 × the boundary sites for
    threshold 1e-6, 2.0 × for 1e-10, 2.2 × for 1e-12 (the default threshold is tol/100).
    """
    per_site = (cost("spectrum.restricted_modes_base")
                + cost("spectrum.restricted_modes_per_decade") * max(0.0, -np.log10(tol)))
    return float(min(n, max(64.0, per_site * boundary)))


def dense_spectrum_seconds(n):
    """Estimated seconds of a dense symplectic eigenproblem of ``n`` sites."""
    return cost("spectrum.dense_flop") * 4.0 * float(n) ** 3


def _restricted_seconds(n, m):
    # two products with n×n blocks per Lanczos vector plus full reorthogonalisation (CGS2)
    return cost("spectrum.restricted_flop") * (4.0 * float(n) ** 2 * m + 4.0 * float(n) * m * m)


def _restricted_run_seconds(backend, network, indices, m):
    """Estimated seconds of the restricted solver beyond the backend's block/trace gathering:
    two operator products per Lanczos vector, and the reorthogonalisation (4 n m² flops)."""
    n = float(indices.size)
    products = getattr(backend, "product_seconds", None)
    per_vector = (products(network, indices) if products is not None
                  else 2.0 * cost("spectral.dense_product_entry") * n * n)
    return m * per_vector + cost("spectrum.restricted_flop") * 4.0 * n * m * m


def restricted_plan(network, indices, tol, temperature=0.0):
    """Lanczos vectors the restricted solver would use, or None where the dense solver is chosen.

    Restricted beyond DENSE_SPECTRUM_LIMIT, or from RESTRICTED_MIN_SITES where it is estimated 2×
    cheaper.  Below RESTRICTED_MIN_SITES the dense solver stays: it is exact to rounding, while
    the restricted bound carries the concavity tail (≈ 1e-7 … 1e-6 at tol = 1e-10).

    Never at temperature > 0: the restricted solver keeps the few modes far from ν = ½ and bounds
    the rest by the trace, which pays only when almost all modes sit at ½ (the ground state's
    boundary law).  A Gibbs state puts every mode of the region at ν ≥ ½ coth(ω_max/2T): the
    spectrum is not dominated by near-½ modes and the full dense eigenproblem is used.
    """
    if temperature > 0:
        return None
    n = indices.size
    if n <= DENSE_SPECTRUM_LIMIT and n < RESTRICTED_MIN_SITES:
        return None
    m = restricted_modes_estimate(n, _boundary_estimate(network, indices), tol)
    if n > DENSE_SPECTRUM_LIMIT or _restricted_seconds(n, m) < 0.5 * dense_spectrum_seconds(n):
        return m
    return None


def restricted_block_spectrum(backend, network, rows, tol):
    """Restricted spectrum from a backend's operators X_A, P_A (the BlockMethod hook; T = 0 only)."""
    ops = backend.operators(network, rows, tol=tol)
    # entropy() has one accuracy knob: the correlator target ``tol`` doubles as the entropy
    # accuracy asked of the Lanczos tail (the block errors enter the bound separately)
    # FFT box operators come with a gathered trace that already holds the entry errors
    norm_errors = ops.operator_rounding if ops.trace is not None else None
    xa, pa = as_array(ops.x), as_array(ops.p)
    if (norm_errors is None and ops.trace is not None and xa is not None and pa is not None
            and ops.entry_x_error is not None):
        # dense blocks with entry bounds: the trace moves by at most e_x·Σ|P| + e_p·Σ|X| + …
        ex, ep = ops.entry_x_error, ops.entry_p_error
        n = float(xa.shape[0])
        t, e = ops.trace
        ops.trace = (t, e + ex * float(np.abs(pa).sum()) + ep * float(np.abs(xa).sum())
                     + n * n * ex * ep)
        norm_errors = (0.0, 0.0)
    fro = {}
    if ops.entry_x_error is not None:
        # the entry bounds describe the blocks' error up to the operators' own rounding (a
        # spectral norm r): ‖F‖_F ≤ n·e + √n·r
        n = float(ops.x.shape[0])
        rx, rp = ops.operator_rounding or (0.0, 0.0)
        fro = {"x_frobenius": n * ops.entry_x_error + math.sqrt(n) * rx,
               "p_frobenius": n * ops.entry_p_error + math.sqrt(n) * rp}
    return restricted_spectrum(ops.x, ops.p, entropy_tol=tol, x_error=ops.x_error,
                               p_error=ops.p_error, trace=ops.trace, info=ops.info,
                               trace_norm_errors=norm_errors, **fro)


def block_spectrum(b, info=None):
    """Dense symplectic spectrum of :class:`~arealaw.correlators.Blocks`, with their error form.

    Loewner-dominating error blocks or entry bounds, when the backend gives them, replace the
    norm bounds (they propagate far more tightly, see :mod:`arealaw.spectrum._bounds`).
    """
    info = b.info if info is None else info
    return symplectic_spectrum(b.x, b.p, **block_error_form(b), info=info)


def block_error_form(b):
    """The tightest error description :class:`~arealaw.correlators.Blocks` carry, as keywords of
    :func:`~arealaw.spectrum._bounds.correlator_terms`: dominating blocks, else entry bounds,
    else spectral norms."""
    if b.x_dominant is not None or b.p_dominant is not None:
        return {"x_dominant": b.x_dominant, "p_dominant": b.p_dominant}
    if b.entry_x_error is not None and b.x.shape[0] == b.x.shape[1]:
        return {"x_entry": b.entry_x_error, "p_entry": b.entry_p_error}
    return {"x_error": b.x_error, "p_error": b.p_error}


class Method:
    """Protocol of a method: ``assess`` (can it serve, at what cost) and ``spectrum``.

    Both take ``temperature`` (T ≥ 0; 0 is the ground state): the spectrum is that of the
    region's reduced Gibbs state.  A method that cannot serve T > 0 answers ``assess`` with
    ``ok=False`` and a reason, and its ``spectrum`` raises UnsupportedMethodError.
    """

    name = "abstract"
    #: Whether :meth:`blocks` serves correlator blocks (needed by the logarithmic negativity).
    provides_blocks = False
    #: True when the spectrum is exact to rounding (no quadrature or truncation at ``tol``).
    exact = False

    def assess(self, network, regions, *, tol, temperature=0.0):
        """Return an :class:`~arealaw.correlators.Assessment`: can this method serve every one of
        ``regions`` of ``network`` at this ``tol`` and temperature, at what memory and time.
        """
        raise NotImplementedError

    def spectrum(self, network, region, *, tol, temperature=0.0):
        """The :class:`~arealaw.SymplecticSpectrum` of ``region`` (with its error bounds)."""
        raise NotImplementedError

    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        """Correlator blocks, for measures that need them (negativity); optional."""
        raise UnsupportedMethodError(f"method {self.name!r} does not provide correlator blocks; "
                                     "use method='dense', 'spectral' or 'sparse'")


def _dense_spectrum_bytes(n):
    return 4.0 * 8.0 * float(n) ** 2


class BlockMethod(Method):
    """A method built on a correlator backend."""

    #: Optional restricted solver: callable(backend, network, rows, tol) -> SymplecticSpectrum.
    restricted_solver = staticmethod(restricted_block_spectrum)
    provides_blocks = True

    def __init__(self, backend_name):
        self.backend = get_backend(backend_name)
        self.name = self.backend.name

    @property
    def exact(self):
        """True when the backend's blocks are exact to rounding (the automatic choice prefers it)."""
        return bool(getattr(self.backend, "exact", False))

    def assess(self, network, regions, *, tol, temperature=0.0):
        if any(r.size == 0 for r in regions):
            return Assessment(False, "a region with infinitely many sites (no site list) is "
                                     "served only by symmetry reductions (method='transverse')")
        n_max = max(r.size for r in regions)
        a = self.backend.assess(network, n_max, tol=tol, temperature=temperature)
        if not a.ok:
            return a
        if n_max > DENSE_SPECTRUM_LIMIT and (self.restricted_solver is None or temperature > 0):
            need = _dense_spectrum_bytes(n_max)
            if not fits_in_memory(need):
                why = (" (the restricted solver serves only the ground state)" if temperature > 0
                       and self.restricted_solver is not None else "")
                return Assessment(False, f"a dense eigenproblem of {n_max} sites needs "
                                         f"{format_bytes(need)}{why}", need)
        big = max(regions, key=lambda r: r.size)
        m = None if self.restricted_solver is None else restricted_plan(network, big.indices, tol,
                                                                        temperature)
        if m is not None:
            secs = a.seconds + len(regions) * _restricted_run_seconds(self.backend, network,
                                                                      big.indices, m)
            need = self.backend.operator_bytes(network, big.indices) + 16.0 * n_max * m
            return Assessment(True, a.reason + "; restricted Lanczos spectrum", need, secs)
        secs = a.seconds + len(regions) * dense_spectrum_seconds(n_max)
        return Assessment(True, a.reason, max(a.bytes, _dense_spectrum_bytes(n_max)), secs)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        n = region.size
        if (self.restricted_solver is not None
                and restricted_plan(network, region.indices, tol, temperature) is not None):
            return self.restricted_solver(self.backend, network, region.indices, tol)
        require_memory(_dense_spectrum_bytes(n), f"a dense symplectic eigenproblem of {n} sites",
                       "use a smaller region" + ("" if temperature > 0 else
                                                 " or a method with a restricted solver"))
        b = self.backend.blocks(network, region.indices, tol=tol, temperature=temperature)
        return block_spectrum(b)

    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        return self.backend.blocks(network, rows, cols, tol=tol, temperature=temperature)


_METHODS = {}


def register_method(method):
    """Make ``method`` available by name (and to ``method='auto'``)."""
    _METHODS[method.name] = method
    return method


def method_names():
    """Registered method names, sorted, with 'auto' first."""
    return ["auto"] + sorted(_METHODS)


class Choice:
    """The chosen method and why."""

    def __init__(self, method, reason):
        self.method = method
        self.reason = reason
        #: Other methods that can serve, cheapest first: (method, assessment) pairs.
        self.alternatives = []

    def __repr__(self):
        return f"Choice({self.method.name!r}, {self.reason!r})"


def choose_method(network, regions, method="auto", *, tol, blocks=False, temperature=0.0):
    """Pick the method for ``regions`` of ``network``; explicit names are checked, not second-guessed.

    With ``blocks=True`` only methods that serve correlator blocks are considered.
    """
    if isinstance(method, Method) or method != "auto":
        # a Method instance (e.g. one with non-default options) is used as given
        if not isinstance(method, (Method, str)):
            raise ValueError(f"method must be a method name (one of "
                             f"{', '.join(method_names())}), got {method!r} "
                             f"({type(method).__name__})")
        if not isinstance(method, Method) and method not in _METHODS:
            raise ValueError(unknown_name("method", method, method_names()))
        m = method if isinstance(method, Method) else _METHODS[method]
        if blocks and not m.provides_blocks:
            alt = _best(network, regions, tol, blocks=True, temperature=temperature)
            hint = f"; method={alt[0].name!r} can" if alt else ""
            raise UnsupportedMethodError(f"method {m.name!r} gives no correlator blocks, which "
                                         f"the logarithmic negativity needs{hint}")
        a = _assess(m, network, regions, tol, temperature)
        if not a.ok:
            alt = _best(network, regions, tol, blocks=blocks, temperature=temperature)
            hint = f"; method={alt[0].name!r} can ({alt[1].reason})" if alt else ""
            raise UnsupportedMethodError(f"method {m.name!r} cannot serve this case: "
                                         f"{a.reason}{hint}")
        return Choice(m, f"requested: {a.reason}")
    assessed = _assessments(network, regions, tol, blocks, temperature)
    best = _pick(assessed)
    if best is None:
        too_big = [(a.bytes, m.name) for m, a in assessed if a.reason.endswith(_TOO_BIG)]
        if too_big:
            need, name = min(too_big)
            raise InsufficientMemoryError(
                f"no method fits in memory: the smallest estimate ({name}) needs about "
                f"{format_bytes(need)} but only {format_bytes(MEMORY_FRACTION * available_bytes())}"
                " is available; use a smaller region (or a machine with more memory)")
        reasons = "; ".join(f"{m.name}: {a.reason}" for m, a in sorted(assessed,
                                                                        key=lambda t: t[0].name))
        raise UnsupportedMethodError(f"no method can serve this case ({reasons})")
    m, a, note = best
    choice = Choice(m, f"auto: {a.reason} (estimated {a.seconds:.2g} s{note})")
    choice.alternatives = [(mm, aa) for mm, aa in sorted(assessed, key=lambda t: t[1].seconds)
                           if aa.ok and mm is not m]
    return choice


_TOO_BIG = "more than the memory available"


def _assess(m, network, regions, tol, temperature):
    """A method's assessment; one whose memory estimate does not fit is not ok (refused here,
    before anything is allocated, rather than by a MemoryError later)."""
    a = m.assess(network, regions, tol=tol, temperature=temperature)
    if a.ok and a.bytes and not fits_in_memory(a.bytes):
        return Assessment(False, f"{a.reason}: needs about {format_bytes(a.bytes)}, {_TOO_BIG}",
                          a.bytes, a.seconds)
    return a


def _assessments(network, regions, tol, blocks=False, temperature=0.0):
    return [(m, _assess(m, network, regions, tol, temperature)) for m in _METHODS.values()
            if m.provides_blocks or not blocks]


def _pick(assessed):
    """(method, assessment, note): the cheapest exact method unless an approximate one is
    estimated APPROXIMATE_ADVANTAGE times cheaper; None if no method can serve."""
    scored = {True: [], False: []}
    for order, (m, a) in enumerate(assessed):
        if a.ok:
            scored[bool(m.exact)].append((a.seconds, order, m, a))
    best = {k: min(v, key=lambda s: (s[0], s[1])) if v else None for k, v in scored.items()}
    exact, approx = best[True], best[False]
    if exact is None and approx is None:
        return None
    if exact is None or (approx is not None and approx[0] * APPROXIMATE_ADVANTAGE < exact[0]):
        return approx[2], approx[3], ""
    note = (f"; exact, preferred to {approx[2].name!r} at {approx[0]:.2g} s"
            if approx is not None and approx[0] < exact[0] else "")
    return exact[2], exact[3], note


def _best(network, regions, tol, blocks=False, temperature=0.0):
    return _pick(_assessments(network, regions, tol, blocks, temperature))
