"""Methods: how a region's symplectic spectrum is obtained, and the automatic choice.

A *method* turns (network, region) into a :class:`SymplecticSpectrum`.  Most methods wrap a
correlator backend (:class:`BlockMethod`): blocks X_A, P_A → stable dense eigenproblem, or, for
regions too large for that, a restricted matrix-free solver.  Symmetry reductions (partial waves,
transverse momenta) implement the same two calls directly.  ``method='auto'`` asks every method
for an :class:`~arealaw.correlators.Assessment` and takes the cheapest that can serve.
"""

from ._errors import UnsupportedMethodError
from ._memory import available_bytes, format_bytes, require_memory
from ._spectrum import symplectic_spectrum
from .correlators import Assessment, get_backend

__all__ = ["BlockMethod", "Choice", "Method", "choose_method", "method_names", "register_method"]

#: Regions above this size are sent to the restricted solver when one is registered.
DENSE_SPECTRUM_LIMIT = 15000


class Method:
    """Protocol of a method: ``assess`` (can it serve, at what cost) and ``spectrum``."""

    name = "abstract"

    def assess(self, network, regions, *, tol):
        raise NotImplementedError

    def spectrum(self, network, region, *, tol):
        raise NotImplementedError

    def blocks(self, network, rows, cols=None, *, tol):
        """Correlator blocks, for measures that need them (negativity); optional."""
        raise UnsupportedMethodError(f"method {self.name!r} does not provide correlator blocks; "
                                     "use method='dense', 'spectral' or 'sparse'")


def _dense_spectrum_bytes(n):
    return 4.0 * 8.0 * float(n) ** 2


class BlockMethod(Method):
    """A method built on a correlator backend."""

    #: Optional restricted solver: callable(backend, network, rows, tol) -> SymplecticSpectrum.
    restricted_solver = None

    def __init__(self, backend_name):
        self.backend = get_backend(backend_name)
        self.name = self.backend.name

    def assess(self, network, regions, *, tol):
        if any(r.size == 0 for r in regions):
            return Assessment(False, "a region with infinitely many sites (no site list) is "
                                     "served only by symmetry reductions (method='transverse')")
        n_max = max(r.size for r in regions)
        a = self.backend.assess(network, n_max, tol=tol)
        if not a.ok:
            return a
        if n_max > DENSE_SPECTRUM_LIMIT and self.restricted_solver is None:
            need = _dense_spectrum_bytes(n_max)
            if need > 0.8 * available_bytes():
                return Assessment(False, f"a dense eigenproblem of {n_max} sites needs "
                                         f"{format_bytes(need)}", need)
        cost = a.seconds + len(regions) * 4e-10 * float(n_max) ** 3
        return Assessment(True, a.reason, max(a.bytes, _dense_spectrum_bytes(n_max)), cost)

    def spectrum(self, network, region, *, tol):
        n = region.size
        if n > DENSE_SPECTRUM_LIMIT and self.restricted_solver is not None:
            return self.restricted_solver(self.backend, network, region.indices, tol)
        require_memory(_dense_spectrum_bytes(n), f"a dense symplectic eigenproblem of {n} sites",
                       "use a smaller region or a method with a restricted solver")
        b = self.backend.blocks(network, region.indices, tol=tol)
        return symplectic_spectrum(b.x, b.p, x_error=b.x_error, p_error=b.p_error, info=b.info)

    def blocks(self, network, rows, cols=None, *, tol):
        return self.backend.blocks(network, rows, cols, tol=tol)


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

    def __repr__(self):
        return f"Choice({self.method.name!r}, {self.reason!r})"


def choose_method(network, regions, method="auto", *, tol):
    """Pick the method for ``regions`` of ``network``; explicit names are checked, not second-guessed."""
    if isinstance(method, Method) or method != "auto":
        # a Method instance (e.g. one with non-default options) is used as given
        if not isinstance(method, Method) and method not in _METHODS:
            raise ValueError(f"unknown method {method!r}; choose one of "
                             f"{', '.join(method_names())}")
        m = method if isinstance(method, Method) else _METHODS[method]
        a = m.assess(network, regions, tol=tol)
        if not a.ok:
            alt = _best(network, regions, tol)
            hint = f"; method={alt[0].name!r} can ({alt[1].reason})" if alt else ""
            raise UnsupportedMethodError(f"method {m.name!r} cannot serve this case: "
                                         f"{a.reason}{hint}")
        return Choice(m, f"requested: {a.reason}")
    best = _best(network, regions, tol)
    if best is None:
        reasons = "; ".join(f"{name}: {m.assess(network, regions, tol=tol).reason}"
                            for name, m in sorted(_METHODS.items()))
        raise UnsupportedMethodError(f"no method can serve this case ({reasons})")
    m, a = best
    return Choice(m, f"auto: {a.reason} (estimated {a.seconds:.2g} s)")


def _best(network, regions, tol):
    scored = []
    for order, m in enumerate(_METHODS.values()):
        a = m.assess(network, regions, tol=tol)
        if a.ok:
            scored.append((a.seconds, order, m, a))
    if not scored:
        return None
    _, _, m, a = min(scored, key=lambda s: (s[0], s[1]))
    return m, a


register_method(BlockMethod("dense"))

from .reductions import RadialMethod, TransverseMethod  # noqa: E402  (they build on Method)

register_method(RadialMethod())
register_method(TransverseMethod())

register_method(BlockMethod("sparse"))

from ._reflections import ReflectionBlockMethod  # noqa: E402  (builds on BlockMethod)

register_method(ReflectionBlockMethod("spectral"))
