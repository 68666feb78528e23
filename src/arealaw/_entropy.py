"""The main entry point: entanglement of one region (or a pair of regions) of a network."""

import math
import time
from dataclasses import dataclass, field

import numpy as np
from threadpoolctl import threadpool_limits

from ._numerics import DEFAULT_TOL, check_tol, require_memory
from ._parallel import parallel_work, parallelism
from .spectrum._measures import (entanglement_energies, entropy_error_bound, mutual_information,
                        normalize_order, order_label, renyi_entropy, von_neumann_entropy)
from .correlators import check_temperature
from .spectrum._negativity import (log_negativity, log_negativity_error_bound,
                                   partial_transpose_spectrum)
from ._errors import ConvergenceError, UnsupportedMethodError
from .spectrum._modes import entangled_modes
from .methods._radial import DEFAULT_RTOL as RADIAL_RTOL, RadialMethod
from .methods._registry import Choice, Method, block_error_form, choose_method, method_names
from .network._radial import radial_lattice, shells
from .network._regions import check_network, check_region, union

__all__ = ["EntropyResult", "NegativityResult", "entropy", "logarithmic_negativity",
           "radial_entropy", "region_modes"]


@dataclass
class EntropyResult:
    """Entropies of a region (and, with a second region, mutual information).

    ``temperature`` is that of the state (0: the ground state); at T > 0 the entropy of a region
    mixes thermal and entanglement parts and the whole system's entropy is the thermal one.

    ``error_bound`` bounds |S − S_exact| from the numerics (eigenvalue residuals, clamping,
    correlator approximation and solver tolerances, omitted tails).  :meth:`to_dict` gives the
    JSON layout printed by ``arealaw entropy --json``.

    ``sites`` counts the network's oscillators and ``region_sites`` the region's: whole
    numbers, or ``math.inf`` for a lattice with an infinite axis (``is_infinite``) and for a
    region that is infinite along it (then ``entropy`` is None and ``entropy_per_area`` is
    given).  JSON writes ``math.inf`` as ``"inf"``.
    """

    entropy: float
    error_bound: float
    renyi: dict
    renyi_error_bound: dict
    modes: int
    method: str
    reason: str
    sites: float
    region_sites: float
    region: str
    network: str
    seconds: float = 0.0
    temperature: float = 0.0
    entropy_b: float = None
    entropy_ab: float = None
    mutual_information: float = None
    mutual_information_error_bound: float = None
    region_b_sites: int = None
    region_b: str = None
    entanglement_energies: list = None
    entropy_per_area: float = None
    log_negativity: float = None
    log_negativity_error_bound: float = None
    spectrum: object = field(default=None, repr=False)
    info: dict = field(default_factory=dict)

    def to_dict(self):
        """JSON-ready dict (the layout of ``arealaw entropy --json``); absent measures are left out.
        """
        d = {k: v for k, v in self.__dict__.items() if k not in ("spectrum",)}
        if self.log_negativity is None:
            d.pop("log_negativity")
            d.pop("log_negativity_error_bound")
        if self.mutual_information is None:
            for k in ("entropy_b", "entropy_ab", "mutual_information",
                      "mutual_information_error_bound", "region_b_sites", "region_b"):
                d.pop(k)
        if self.entanglement_energies is None:
            d.pop("entanglement_energies")
        if self.entropy_per_area is None:
            d.pop("entropy_per_area")
        return _jsonable(d)

    @property
    def is_infinite(self):
        """True for a network with infinitely many oscillators (``sites`` is ``math.inf``)."""
        return math.isinf(self.sites)


@dataclass
class NegativityResult:
    """Logarithmic negativity E_N(A:B) = ln‖ρ_AB^{T_B}‖₁ of two disjoint regions.

    ``error_bound`` bounds |E_N − E_N(exact)| from the numerics (eigenvalue residuals and the
    correlator errors).  ``route`` says how it was computed: ``'partial transpose'`` of the
    reduced state of A ∪ B (the rest traced out), or, for a pure state with B the complement of
    A, ``'pure state: Renyi-1/2 entropy of A'`` (E_N = S_½(A), Vidal & Werner 2002).
    """

    log_negativity: float
    error_bound: float
    method: str
    reason: str
    route: str
    region_sites: int
    region_b_sites: int
    seconds: float = 0.0
    info: dict = field(default_factory=dict)

    def to_dict(self):
        """JSON layout: ``log_negativity``, ``log_negativity_error_bound`` and the context."""
        d = dict(self.__dict__)
        d["log_negativity_error_bound"] = d.pop("error_bound")
        return _jsonable(d)


def _jsonable(obj):
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, (np.floating, float)):
        f = float(obj)
        return f if math.isfinite(f) else ("inf" if f > 0 else None)
    if isinstance(obj, np.integer):
        return int(obj)
    return obj


def _check_region(network, region, name):
    check_region(network, region, name)


def _check_method(method):
    if not isinstance(method, (str, Method)):
        raise ValueError(f"method must be a method name (one of "
                         f"{', '.join(method_names())}), got {method!r} "
                         f"({type(method).__name__})")
    return method


def _measures(spec, orders):
    renyi = {order_label(n): renyi_entropy(spec, n) for n in orders}
    renyi_err = {order_label(n): entropy_error_bound(spec, n) for n in orders}
    return von_neumann_entropy(spec), entropy_error_bound(spec), renyi, renyi_err


def _check_pair(network, region, region_b, what):
    _check_region(network, region_b, "region_b")
    overlap = np.intersect1d(region.indices, region_b.indices)
    if overlap.size:
        raise ValueError(f"regions A and B share {overlap.size} sites (e.g. site "
                         f"{int(overlap[0])}); {what} needs disjoint regions")


def _pure_complement(network, region, region_b, temperature=0.0):
    """True when A, B (disjoint) cover a finite network whose state is pure (T = 0)."""
    return (temperature == 0 and network.n_sites is not None and region.size > 0 and region_b.size > 0
            and region.size + region_b.size == network.n_sites)


def entropy(network, region, *, region_b=None, renyi=(), method="auto", tol=DEFAULT_TOL,
            energies=0, negativity=False, temperature=0.0, workers=None, scheduler=None):
    """Entropy of ``region`` in the ground state (or Gibbs state at ``temperature``) of ``network``.

    Parameters
    ----------
    network : OscillatorNetwork
    region : Region
    region_b : Region, optional
        A second region disjoint from ``region``: adds S_B, S_AB and I(A:B) = S_A + S_B − S_AB.
        When the two cover the network (B = ``complement(network, region)``) the state of A ∪ B
        is pure, so S_B = S_A and S_AB = 0 are used without computing them.
    renyi : sequence of float or 'inf'
        Rényi orders n > 0 to report besides von Neumann.
    method : str
        ``'auto'`` or a registered method name (see :func:`arealaw.method_names`).
    tol : float
        Target accuracy of the correlators (absolute, lattice units).
    energies : int
        Also return the lowest ``energies`` entanglement energies (0: none).
    negativity : bool
        With ``region_b``: also the logarithmic negativity E_N(A:B) and its error bound
        (``log_negativity``, ``log_negativity_error_bound``; see :func:`logarithmic_negativity`).
    temperature : float
        T ≥ 0 of the Gibbs state ρ ∝ exp(−H/T) (k_B = ħ = 1, lattice units); 0 is the ground
        state.  Methods that serve only the ground state refuse T > 0 and name one that can.
    workers : int, optional
        Local processes for the computation's independent work units (column blocks of the
        sparse solves, parity sectors, partial waves, transverse momenta); 1: all in this
        process.  Default: each stage's automatic choice.
    scheduler : str or distributed.Client, optional
        Send those work units to the workers of a dask.distributed cluster instead (an address
        such as ``'tcp://head-node:8786'``, or a client).  Workers need arealaw installed, not
        the network's files: the units carry their data.  The numbers are those of a serial
        computation, bit for bit.

    Returns
    -------
    EntropyResult

    Examples
    --------
    >>> from arealaw import hypercubic, box, entropy
    >>> net = hypercubic(20, mass=0.5)
    >>> res = entropy(net, box(net, 10, origin=0), method="dense")
    >>> round(res.entropy, 6), res.error_bound < 1e-9
    (0.135471, True)
    >>> hot = entropy(net, box(net, 10, origin=0), method="dense", temperature=0.5)
    >>> hot.entropy > res.entropy, hot.error_bound < 1e-9
    (True, True)
    """
    par = parallelism(workers, scheduler)
    with parallel_work(par):
        res = _entropy(network, region, region_b=region_b, renyi=renyi, method=method, tol=tol,
                       energies=energies, negativity=negativity, temperature=temperature)
    if not par.is_automatic:
        res.info["parallel"] = par.describe()
    return res


def _entropy(network, region, *, region_b, renyi, method, tol, energies, negativity,
             temperature):
    t0 = time.perf_counter()
    check_network(network)
    _check_method(method)
    orders = [normalize_order(n) for n in np.atleast_1d(np.asarray(renyi, dtype=object))] \
        if np.size(renyi) else []
    tol = check_tol(tol)
    if isinstance(energies, bool) or not isinstance(energies, (int, np.integer)) or energies < 0:
        raise ValueError(f"energies={energies!r} must be a whole number >= 0")
    if not isinstance(negativity, (bool, np.bool_)):
        raise ValueError(f"negativity={negativity!r} must be True or False")
    temperature = check_temperature(temperature)
    _check_region(network, region, "region")
    if negativity and region_b is None:
        raise ValueError("negativity=True needs region_b (a second region disjoint from region; "
                         "for A against the rest use complement(network, region))")
    regions = [region]
    pure = False
    if region_b is not None:
        _check_pair(network, region, region_b,
                    "the logarithmic negativity" if negativity else "mutual information")
        pure = _pure_complement(network, region, region_b, temperature)
        if not pure:
            regions += [region_b, union(network, region, region_b)]
    choice = choose_method(network, regions, method, tol=tol, temperature=temperature)
    choice, spectra = _spectra_with_fallback(choice, network, regions, tol, temperature)
    s, err, ren, ren_err = _measures(spectra[0], orders)
    res = EntropyResult(
        entropy=s, error_bound=err, renyi=ren, renyi_error_bound=ren_err,
        modes=int(round(spectra[0].n_modes)), method=choice.method.name, reason=choice.reason,
        sites=network.n_sites if network.n_sites is not None else math.inf,
        region_sites=region.size, region=region.description, network=repr(network),
        spectrum=spectra[0], info=_info(spectra[0]), temperature=temperature)
    if "n_radial" in spectra[0].info and "lmax" in spectra[0].info:
        # partial waves: the network is its N radial sites, and each of the lmax + 1 waves
        # summed exactly has one mode per shell of the ball (the l-tail is bracketed, and the
        # (2l+1)-fold degeneracies are weights, not extra modes computed)
        waves = int(spectra[0].info["lmax"]) + 1
        res.sites, res.modes = int(spectra[0].info["n_radial"]), region.size * waves
        res.info["partial_waves"] = waves
    if spectra[0].info.get("per_area"):
        # infinite transverse axes: S itself is infinite; the spectrum is weighted per unit area
        res.entropy_per_area, res.entropy, res.region_sites = s, None, math.inf
    if energies:
        res.entanglement_energies = entanglement_energies(spectra[0])[:energies].tolist()
    if region_b is not None:
        if pure:
            # a pure state: B = Ā has A's spectrum (Schmidt decomposition) and S_AB = 0
            s_b, err_b, s_ab, err_ab = s, err, 0.0, 0.0
            res.info["pure_complement"] = True
        else:
            s_b, err_b, _, _ = _measures(spectra[1], [])
            s_ab, err_ab, _, _ = _measures(spectra[2], [])
        res.entropy_b, res.entropy_ab = s_b, s_ab
        res.mutual_information = mutual_information(s, s_b, s_ab)
        res.mutual_information_error_bound = err + err_b + err_ab
        res.region_b_sites, res.region_b = region_b.size, region_b.description
    if negativity:
        # the partial transpose needs blocks: keep the entropy's method when it gives them
        neg_method = choice.method if (method == "auto" and choice.method.provides_blocks) \
            else method
        neg = _negativity(network, region, region_b, neg_method, tol,
                          spec_a=(spectra[0], choice.method.name) if pure else None,
                          temperature=temperature)
        res.log_negativity, res.log_negativity_error_bound = neg.log_negativity, neg.error_bound
        res.info["log_negativity_route"] = neg.route
        res.info["log_negativity_method"] = neg.method
    res.seconds = time.perf_counter() - t0
    return res


#: Failures of a method on the numerics of one case (not bad input, which is refused before a
#: method is chosen): with method='auto' the next method that assessed ok is tried.
_NUMERICAL_FAILURES = (ValueError, ConvergenceError, np.linalg.LinAlgError, FloatingPointError)


def _spectra_with_fallback(choice, network, regions, tol, temperature):
    """Spectra of ``regions`` by the chosen method; under 'auto', by the next one that can
    serve when it fails on numerics (e.g. a near-zero mode that defeats a Cholesky factor while
    the exact spectral sums are fine), saying so in the reason."""
    tried = []
    candidates = [(choice.method, None)] + list(getattr(choice, "alternatives", []))
    # Only lattices: they are positive definite by construction (zero modes are refused when
    # built), so a method failing on one failed on numerics; a user's matrix that a method
    # finds indefinite is bad input, and other methods would only say so again, slower.
    auto = choice.reason.startswith("auto") and network.lattice is not None
    for method, assessment in candidates:
        try:
            spectra = [method.spectrum(network, r, tol=tol, temperature=temperature)
                       for r in regions]
        except _NUMERICAL_FAILURES as exc:
            if not auto or isinstance(exc, UnsupportedMethodError):
                raise
            tried.append((method.name, str(exc).split("; ")[0] if str(exc) else
                          type(exc).__name__))
            continue
        if tried:
            why = "; ".join(f"{name} failed ({msg})" for name, msg in tried)
            choice = Choice(method, f"auto: {why}; fell back to {method.name}: "
                                    f"{assessment.reason}")
        return choice, spectra
    name, msg = tried[0]
    raise ValueError(f"every method that could serve this case failed: {name}: {msg}"
                     + "".join(f"; {n}: {m}" for n, m in tried[1:]))


def radial_entropy(n_radial, n_shells, *, dim=3, mass=0.0, renyi=(), lmax=None,
                   rtol=RADIAL_RTOL, tol=DEFAULT_TOL, n_jobs=None):
    """Entanglement entropy of a ball of ``n_shells`` radial sites (R = n + ½) on the radial lattice.

    Parameters
    ----------
    n_radial : int
        Radial sites N (Dirichlet wall at N + 1).
    n_shells : int
        The ball: the first n radial sites, 1 ≤ n < N.
    dim : {2, 3}
    mass : float
    renyi : sequence
        Rényi orders besides von Neumann.
    lmax : int, optional
        Fixed angular-momentum cut-off: the value is the sum up to ``lmax`` and the whole tail
        is in the bound.  Default: the smallest L whose proven tail bracket has half-width at
        most max(``tol``, ``rtol``·S)/2 (lowered where computed sectors' rounding dominates),
        with the bracket's midpoint added to the value.
    rtol : float
        Relative accuracy aimed at for the l-sum.
    tol : float
        Absolute accuracy of the l-sum (the larger of the two targets counts).
    n_jobs : int, optional
        joblib workers for the sectors (default: parallel only when it pays).

    Returns
    -------
    EntropyResult
        ``info['lmax']`` is the explicit cut-off, ``info['l_tail_lower']`` and
        ``info['l_tail_upper']`` the proven bracket of the tail, ``info['l_tail_estimate']`` the
        part of the value that stands for it, and ``error_bound`` includes the tail's bound.

    Examples
    --------
    >>> from arealaw import radial_entropy
    >>> res = radial_entropy(20, 5, lmax=40)
    >>> 0.25 < res.entropy / 5.5**2 < 0.32
    True
    """
    net = radial_lattice(n_radial, dim=dim, mass=mass)
    region = shells(net, n_shells)
    method = RadialMethod(lmax=lmax, rtol=rtol, n_jobs=n_jobs)
    res = entropy(net, region, renyi=renyi, method=method, tol=tol)
    return res


def region_modes(network, region, *, count=2, method="auto", tol=DEFAULT_TOL):
    """Symplectic eigenvalues ν and site profiles of the ``count`` most entangled modes.

    Reads the region's blocks X_A, P_A from a method that provides them and passes them to
    :func:`arealaw.spectrum.entangled_modes`.

    Returns
    -------
    nu : ndarray, shape (count,)
    u : ndarray, shape (count, region.size)
        Unit-norm eigenvectors of X_A P_A, largest ν first.

    Examples
    --------
    >>> from arealaw import hypercubic, box, region_modes
    >>> net = hypercubic((10, 10), mass=0.2)
    >>> nu, u = region_modes(net, box(net, [4, 4]), count=1)
    >>> bool(nu[0] > 0.5), u.shape
    (True, (1, 16))
    """
    tol = check_tol(tol)
    _check_region(network, region, "region")
    choice = choose_method(network, [region], method, tol=tol, blocks=True)
    with threadpool_limits(limits=1):  # threaded BLAS only loses time on small shared machines
        b = choice.method.blocks(network, region.indices, tol=tol)
        return entangled_modes(b.x, b.p, count=count)


def _info(spec):
    info = {k: v for k, v in spec.info.items() if np.ndim(v) == 0 or isinstance(v, (list, tuple))}
    info["clamped_modes"] = spec.clamped
    if spec.tail is not None:
        info["tail_modes"] = spec.tail.count
        info["tail_sum_t"] = spec.tail.sum_t
    return info


def logarithmic_negativity(network, region_a, region_b, *, method="auto", tol=DEFAULT_TOL,
                           temperature=0.0, workers=None, scheduler=None):
    """Logarithmic negativity E_N(A:B) of the (generally mixed) reduced state of A ∪ B.

    The rest of the network is traced out.  Partial transposition flips the sign of B's
    momenta, P̃ = R P_AB R with R = diag(1_A, −1_B); E_N = Σ max(0, −ln 2ν̃) over the symplectic
    eigenvalues ν̃ of (X_AB, P̃) (Vidal & Werner 2002, Phys. Rev. A 65, 032314).  When A and B
    cover the network the state is pure and E_N = S_½(A), computed from A's spectrum alone.

    Parameters
    ----------
    network : OscillatorNetwork
    region_a, region_b : Region
        Disjoint regions.
    method : str
        ``'auto'`` or a method that gives correlator blocks (``'dense'``, ``'sparse'``,
        ``'spectral'``); for B = Ā any method.
    tol : float
        Target accuracy of the correlators.
    temperature : float
        T ≥ 0 of the Gibbs state (0: the ground state, pure).
    workers, scheduler : optional
        Where the independent work units run, as in :func:`entropy`.

    Returns
    -------
    NegativityResult

    Examples
    --------
    >>> from arealaw import hypercubic, box, logarithmic_negativity
    >>> net = hypercubic(12, mass=0.3)
    >>> res = logarithmic_negativity(net, box(net, 3, origin=2), box(net, 3, origin=5))
    >>> res.log_negativity > 100 * res.error_bound > 0
    True
    """
    check_network(network)
    _check_method(method)
    tol = check_tol(tol)
    _check_region(network, region_a, "region_a")
    _check_pair(network, region_a, region_b, "the logarithmic negativity")
    temperature = check_temperature(temperature)
    with parallel_work(parallelism(workers, scheduler)):
        return _negativity(network, region_a, region_b, method, tol, temperature=temperature)


def _partial_transpose_bytes(n):
    # blocks X, P, the flipped P, the symmetric form, eigenvectors and the residual product
    return 6.0 * 8.0 * float(n) ** 2


def _negativity(network, region_a, region_b, method, tol, spec_a=None, temperature=0.0):
    t0 = time.perf_counter()
    sizes = dict(region_sites=region_a.size, region_b_sites=region_b.size)
    if _pure_complement(network, region_a, region_b, temperature):
        if spec_a is None:
            choice = choose_method(network, [region_a], method, tol=tol)
            name, reason = choice.method.name, choice.reason
            spec_a = choice.method.spectrum(network, region_a, tol=tol)
        else:
            spec_a, name = spec_a
            reason = "spectrum of A (shared with the entropy)"
        return NegativityResult(
            renyi_entropy(spec_a, 0.5), entropy_error_bound(spec_a, 0.5), name, reason,
            "pure state: Renyi-1/2 entropy of A", **sizes, seconds=time.perf_counter() - t0)
    ab = union(network, region_a, region_b)
    choice = choose_method(network, [ab], method, tol=tol, blocks=True, temperature=temperature)
    n = ab.size
    require_memory(_partial_transpose_bytes(n), f"the partial transpose of {n} sites (A ∪ B)",
                   "use smaller regions A and B")
    rows = np.concatenate([region_a.indices, region_b.indices])
    b = choice.method.blocks(network, rows, tol=tol, temperature=temperature)
    pt = partial_transpose_spectrum(b.x, b.p, np.arange(n) >= region_a.size,
                                    **block_error_form(b))
    info = {"negative_modes": int(np.count_nonzero(pt.tau < 0)),
            "min_nu": float(pt.nu.min())}
    return NegativityResult(log_negativity(pt), log_negativity_error_bound(pt),
                            choice.method.name, choice.reason, "partial transpose", **sizes,
                            seconds=time.perf_counter() - t0, info=info)
