"""The main entry point: entanglement of one region (or a pair of regions) of a network."""

import math
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from ._numerics import DEFAULT_TOL, check_tol
from .spectrum._measures import (entanglement_energies, entropy_error_bound, mutual_information,
                        normalize_order, order_label, renyi_entropy, von_neumann_entropy)
from .methods._registry import choose_method
from .network._regions import Region, union

__all__ = ["EntropyResult", "entropy", "logarithmic_negativity"]


@dataclass
class EntropyResult:
    """Entropies of a region (and, with a second region, mutual information).

    ``error_bound`` bounds |S − S_exact| from the numerics (eigenvalue residuals, clamping,
    correlator approximation and solver tolerances, omitted tails).  :meth:`to_dict` gives the
    JSON layout printed by ``arealaw entropy --json``.
    """

    entropy: float
    error_bound: float
    renyi: dict
    renyi_error_bound: dict
    modes: int
    method: str
    reason: str
    sites: object
    region_sites: int
    region: str
    network: str
    seconds: float = 0.0
    entropy_b: float = None
    entropy_ab: float = None
    mutual_information: float = None
    mutual_information_error_bound: float = None
    region_b_sites: int = None
    region_b: str = None
    entanglement_energies: list = None
    entropy_per_area: float = None
    spectrum: object = field(default=None, repr=False)
    info: dict = field(default_factory=dict)

    def to_dict(self):
        d = {k: v for k, v in self.__dict__.items() if k not in ("spectrum",)}
        if self.mutual_information is None:
            for k in ("entropy_b", "entropy_ab", "mutual_information",
                      "mutual_information_error_bound", "region_b_sites", "region_b"):
                d.pop(k)
        if self.entanglement_energies is None:
            d.pop("entanglement_energies")
        if self.entropy_per_area is None:
            d.pop("entropy_per_area")
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
    if not isinstance(region, Region):
        raise TypeError(f"{name} must be a Region (see arealaw.box, ball, from_sites, ...), "
                        f"got {type(region).__name__}")
    if region.size and region.indices[-1] >= network.index_limit:
        raise ValueError(f"{name} has site {int(region.indices[-1])}, outside this network of "
                         f"{network.index_limit} sites; was it built for another network?")


def _measures(spec, orders):
    renyi = {order_label(n): renyi_entropy(spec, n) for n in orders}
    renyi_err = {order_label(n): entropy_error_bound(spec, n) for n in orders}
    return von_neumann_entropy(spec), entropy_error_bound(spec), renyi, renyi_err


def entropy(network, region, *, region_b=None, renyi=(), method="auto", tol=DEFAULT_TOL,
            energies=0):
    """Entanglement entropy of ``region`` in the ground state of ``network``.

    Parameters
    ----------
    network : OscillatorNetwork
    region : Region
    region_b : Region, optional
        A second region disjoint from ``region``: adds S_B, S_AB and I(A:B) = S_A + S_B − S_AB.
    renyi : sequence of float or 'inf'
        Rényi orders n > 0 to report besides von Neumann.
    method : str
        ``'auto'`` or a registered method name (see :func:`arealaw.method_names`).
    tol : float
        Target accuracy of the correlators (absolute, lattice units).
    energies : int
        Also return the lowest ``energies`` entanglement energies (0: none).

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
    """
    t0 = time.perf_counter()
    orders = [normalize_order(n) for n in np.atleast_1d(np.asarray(renyi, dtype=object))] \
        if np.size(renyi) else []
    tol = check_tol(tol)
    if isinstance(energies, bool) or not isinstance(energies, (int, np.integer)) or energies < 0:
        raise ValueError(f"energies={energies!r} must be a whole number >= 0")
    _check_region(network, region, "region")
    regions = [region]
    if region_b is not None:
        _check_region(network, region_b, "region_b")
        overlap = np.intersect1d(region.indices, region_b.indices)
        if overlap.size:
            raise ValueError(f"regions A and B share {overlap.size} sites (e.g. site "
                             f"{int(overlap[0])}); mutual information needs disjoint regions")
        region_ab = union(network, region, region_b)
        regions += [region_b, region_ab]
    choice = choose_method(network, regions, method, tol=tol)
    spectra = [choice.method.spectrum(network, r, tol=tol) for r in regions]
    s, err, ren, ren_err = _measures(spectra[0], orders)
    res = EntropyResult(
        entropy=s, error_bound=err, renyi=ren, renyi_error_bound=ren_err,
        modes=int(round(spectra[0].n_modes)), method=choice.method.name, reason=choice.reason,
        sites=network.n_sites if network.n_sites is not None else "inf",
        region_sites=region.size, region=region.description, network=repr(network),
        spectrum=spectra[0], info=_info(spectra[0]))
    if spectra[0].info.get("per_area"):
        # infinite transverse axes: S itself is infinite; the spectrum is weighted per unit area
        res.entropy_per_area, res.entropy, res.region_sites = s, None, "inf"
    if energies:
        res.entanglement_energies = entanglement_energies(spectra[0])[:energies].tolist()
    if region_b is not None:
        s_b, err_b, _, _ = _measures(spectra[1], [])
        s_ab, err_ab, _, _ = _measures(spectra[2], [])
        res.entropy_b, res.entropy_ab = s_b, s_ab
        res.mutual_information = mutual_information(s, s_b, s_ab)
        res.mutual_information_error_bound = err + err_b + err_ab
        res.region_b_sites, res.region_b = region_b.size, region_b.description
    res.seconds = time.perf_counter() - t0
    return res


def _info(spec):
    info = {k: v for k, v in spec.info.items() if np.ndim(v) == 0 or isinstance(v, (list, tuple))}
    info["clamped_modes"] = spec.clamped
    if spec.tail is not None:
        info["tail_modes"] = spec.tail.count
        info["tail_sum_t"] = spec.tail.sum_t
    return info


def logarithmic_negativity(network, region_a, region_b, *, method="auto", tol=DEFAULT_TOL):
    """Logarithmic negativity E_N(A:B) of the (generally mixed) reduced state of A ∪ B.

    Partial transposition flips the sign of B's momenta, P → Π P Π with Π = diag(1_A, −1_B);
    E_N = Σ max(0, −ln 2ν̃) over the symplectic eigenvalues ν̃ of (X_AB, ΠP_ABΠ)
    (Vidal & Werner 2002).  Returns (E_N, method name).

    Examples
    --------
    >>> from arealaw import hypercubic, box, logarithmic_negativity
    >>> net = hypercubic(12, mass=0.3)
    >>> en, _ = logarithmic_negativity(net, box(net, 3, origin=2), box(net, 3, origin=5))
    >>> en > 0
    True
    """
    _check_region(network, region_a, "region_a")
    _check_region(network, region_b, "region_b")
    if np.intersect1d(region_a.indices, region_b.indices).size:
        raise ValueError("regions A and B overlap; negativity needs disjoint regions")
    rows = np.concatenate([region_a.indices, region_b.indices])
    ab = union(network, region_a, region_b)
    choice = choose_method(network, [ab], method, tol=tol)
    b = choice.method.blocks(network, rows, tol=tol)
    sign = np.concatenate([np.ones(region_a.size), -np.ones(region_b.size)])
    p_t = b.p * sign[:, None] * sign[None, :]
    chol = scipy.linalg.cholesky(0.5 * (b.x + b.x.T), lower=True)
    w = chol.T @ p_t @ chol
    nu2 = scipy.linalg.eigvalsh(0.5 * (w + w.T))
    nu = np.sqrt(np.maximum(nu2, 0.0))
    with np.errstate(divide="ignore"):
        en = float(np.sum(np.maximum(0.0, -np.log(2 * nu))))
    return en, choice.method.name
