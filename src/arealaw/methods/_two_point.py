"""The spacetime two-point-function route: S from W v = λ iΔ v on the region.

Sorkin's formulation of the entropy of a Gaussian state (Sorkin 2012, arXiv:1205.2953; Saravani,
Sorkin & Yazdi 2014, Class. Quantum Grav. 31, 214006) uses only the Wightman function W and the
Pauli–Jordan commutator iΔ restricted to the region.  On one time slice the region's field
operators are ξ = (q_A, p_A), and

    W_jk = ⟨ξ_j ξ_k⟩ = [[X, C + i/2], [Cᵀ − i/2, P]],   iΔ_jk = ⟨[ξ_j, ξ_k]⟩ = [[0, i], [−i, 0]]

(C = ⟨{q, p}⟩/2 is the qp correlator, zero for H = ½pᵀM⁻¹p + ½qᵀVq).  The entropy is
S = Σ λ ln|λ| over the non-zero generalized eigenvalues of W v = λ iΔ v.

Derivation and sign conventions (checked against the symplectic route).  Write W = σ + ½ iΔ with
σ = [[X, C], [Cᵀ, P]] the symmetrised correlator, positive definite for a physical state.  Then
W v = λ iΔ v is σ v = κ iΔ v with κ = λ − ½, and since (iΔ)² = 1 the κ are the eigenvalues of
iΔ σ, which is similar to the Hermitian K = Lᵀ (iΔ) L (σ = L Lᵀ, Cholesky).  Williamson's
theorem gives iΔ σ the eigenvalues ±ν_k, ν_k the symplectic eigenvalues, so every mode gives
the pair λ₊ = ν + ½ and λ₋ = ½ − ν = −(ν − ½), and

    Σ λ ln|λ| = Σ_k (ν_k + ½) ln(ν_k + ½) − (ν_k − ½) ln(ν_k − ½),

the von Neumann entropy with the usual sign (a mode with ν = ½ gives λ = 1 and λ = 0, both
contributing nothing; λ = 0 is the kernel of W the route excludes).  So the route returns a
:class:`~arealaw.SymplecticSpectrum` with t = ν² − ¼ = λ₊·|λ₋|, and every measure (Rényi, energies)
follows as for the other methods; the sum Σ λ ln|λ| itself is kept in ``info['two_point_entropy']``.

Numerics: K is a 2n × 2n complex Hermitian matrix, solved by a dense Hermitian eigensolver with
eigenvectors; each computed κ is within its residual ‖K u − κ u‖ (plus a rounding term for forming
K) of an exact eigenvalue, and the pair (κ₊, κ₋) gives ν = (κ₊ − κ₋)/2.  Correlator errors enter
t per mode as in :func:`~arealaw.symplectic_spectrum` (Weyl, in whichever error form the
backend gives).  The route costs about 20×
the symplectic route's dense eigenproblem (complex arithmetic, twice the dimension): it is an
independent cross-check, and ``method='auto'`` never prefers it to a cheaper exact route.
"""

import numpy as np
import scipy.linalg

from .._errors import UnsupportedMethodError
from .._numerics import EPS, available_bytes, format_bytes, require_memory
from ..correlators import Assessment, backend_names, get_backend
from ..spectrum._bounds import correlator_terms
from ..spectrum._symplectic import SymplecticSpectrum
from ._registry import Method, block_error_form

__all__ = ["TwoPointMethod", "two_point_spectrum"]

#: Seconds per (2n)³ of the route: complex Hermitian eigenproblem with eigenvectors and residuals
#: (benchmarks/bench_two_point.py, one BLAS thread: 3.4e-9 at n = 400 on a loaded machine, about
#: 20× the symplectic route's dense eigenproblem on the same blocks).
_SECONDS_PER_CUBE = 3.0e-9


def _two_point_bytes(n):
    # K, its eigenvectors and K·U (complex 2n × 2n), plus the real σ and its Cholesky factor
    return 3.0 * 16.0 * (2.0 * n) ** 2 + 2.0 * 8.0 * (2.0 * n) ** 2


def _two_point_seconds(n):
    return _SECONDS_PER_CUBE * (2.0 * n) ** 3


def two_point_spectrum(x, p, c=None, *, x_error=0.0, p_error=0.0, x_dominant=None,
                       p_dominant=None, x_entry=0.0, p_entry=0.0, info=None):
    """Symplectic spectrum of a region from W v = λ iΔ v (see the module docstring).

    Parameters
    ----------
    x, p : ndarray (n, n)
        X_A and P_A.
    c : ndarray (n, n), optional
        The qp correlator C_A = ⟨{q, p}⟩/2 (default zero, as for H = ½pᵀM⁻¹p + ½qᵀVq).
    x_error, p_error, x_dominant, p_dominant, x_entry, p_entry
        Errors of ``x`` and ``p`` in the forms of
        :func:`~arealaw.spectrum._bounds.correlator_terms` (``c`` is taken as exact).

    Returns
    -------
    SymplecticSpectrum
        ``info['two_point_entropy']`` holds Σ λ ln|λ| over the non-zero λ.

    Examples
    --------
    One oscillator with X = P = 1 has ν = 1, so λ = 3/2 and −1/2:

    >>> import numpy as np
    >>> from arealaw.methods import two_point_spectrum
    >>> spec = two_point_spectrum(np.eye(1), np.eye(1))
    >>> float(spec.nu[0]), round(spec.info["two_point_entropy"], 12)
    (1.0, 0.954771252442)
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    p = np.atleast_2d(np.asarray(p, dtype=float))
    n = x.shape[0]
    c = np.zeros((n, n)) if c is None else np.atleast_2d(np.asarray(c, dtype=float))
    if x.shape != p.shape or x.shape != c.shape or n != x.shape[1]:
        raise ValueError(f"X_A {x.shape}, P_A {p.shape} and C_A {c.shape} must be square blocks "
                         "of one shape")
    if n == 0:
        raise ValueError("the region is empty; the two-point route needs at least one site")
    sigma = np.block([[0.5 * (x + x.T), c], [c.T, 0.5 * (p + p.T)]])
    try:
        chol = scipy.linalg.cholesky(sigma, lower=True)
    except np.linalg.LinAlgError:
        raise ValueError("the symmetrised two-point function [[X, C], [Cᵀ, P]] is not positive "
                         "definite: not the correlators of a physical Gaussian state") from None
    # K = Lᵀ iΔ L with iΔ = [[0, i], [−i, 0]]: iΔ L swaps the row halves, times ±i
    idl = 1j * np.vstack([chol[n:], -chol[:n]])
    k = chol.T @ idl
    k = 0.5 * (k + k.conj().T)
    # rounding of the product forming K, entry by entry ≤ a few ε·(|L|ᵀ|iΔ L|)_jk
    abs_l = np.abs(chol)
    form = 2.0 * np.sqrt(2.0 * n) * EPS * float(np.max(abs_l.T @ np.abs(idl).sum(axis=1)))
    del abs_l
    kappa, vec = scipy.linalg.eigh(k)
    resid = np.linalg.norm(k @ vec - vec * kappa, axis=0)
    scale = float(np.max(np.abs(kappa)))
    # rounding of σ's Cholesky factor and of the product forming K, relative to ‖K‖ ≤ ‖σ‖
    delta = resid + 8.0 * np.sqrt(2.0 * n) * EPS * max(scale, _norm(sigma)) + form
    # κ ascending: the n smallest are −ν (descending ν), the n largest +ν (ascending ν)
    plus, minus = kappa[n:][::-1], -kappa[:n]
    d_nu = np.maximum(delta[n:][::-1], delta[:n])
    nu = 0.5 * (plus + minus)
    lam_plus, lam_minus = 0.5 + nu, 0.5 - nu
    t = lam_plus * np.maximum(-lam_minus, 0.0)
    # |δt| = |δ(ν²)| ≤ (2ν + δν)·δν, and correlator errors through Weyl (as for X_A P_A)
    t_error = (2.0 * nu + d_nu) * d_nu
    t_error = t_error + correlator_terms(
        sigma[:n, :n], sigma[n:, n:], x_error, p_error, x_dominant=x_dominant,
        p_dominant=p_dominant, x_entry=x_entry, p_entry=p_entry).per_mode
    lam = 0.5 + kappa
    nonzero = lam[lam != 0.0]
    s_two_point = float(np.sum(nonzero * np.log(np.abs(nonzero))))
    out = dict(info or {})
    out["two_point_entropy"] = s_two_point
    order = np.argsort(-t, kind="stable")
    return SymplecticSpectrum(t=t[order], t_error=t_error[order], weights=np.ones(n),
                              clamped=int(np.count_nonzero(lam_minus > 0)), info=out)


def _norm(a):
    """Spectral norm of a symmetric positive semi-definite matrix (its largest eigenvalue)."""
    m = a.shape[0]
    if m > 4000:
        return float(np.abs(a).sum(axis=1).max())  # ‖a‖₂ ≤ ‖a‖_∞ for symmetric a
    return float(abs(scipy.linalg.eigvalsh(a, subset_by_index=[m - 1, m - 1])[0]))


class TwoPointMethod(Method):
    """Entropy from the region's Wightman function and commutator (``method='two-point'``).

    Correlator blocks come from the cheapest registered backend that serves the network (at
    ``temperature``: the Gibbs state's X_T, P_T give W and the same iΔ, so nothing else changes).
    """

    name = "two-point"
    provides_blocks = True

    def _backend(self, network, n, tol, temperature):
        best = None
        for name in backend_names():
            a = get_backend(name).assess(network, n, tol=tol, temperature=temperature)
            if a.ok and (best is None or a.seconds < best[1].seconds):
                best = (get_backend(name), a)
        return best

    def assess(self, network, regions, *, tol, temperature=0.0):
        if any(r.size == 0 for r in regions):
            return Assessment(False, "a region with infinitely many sites (no site list) is "
                                     "served only by symmetry reductions (method='transverse')")
        n = max(r.size for r in regions)
        best = self._backend(network, n, tol, temperature)
        if best is None:
            return Assessment(False, "no correlator backend serves this network"
                              + (f" at temperature {temperature:g}" if temperature else ""))
        backend, a = best
        need = max(a.bytes, _two_point_bytes(n))
        if need > 0.8 * available_bytes():
            return Assessment(False, f"the two-point eigenproblem of {n} sites needs "
                                     f"{format_bytes(need)}", need)
        seconds = a.seconds + len(regions) * _two_point_seconds(n)
        return Assessment(True, f"W v = λ iΔ v on {2 * n} phase-space variables, blocks from "
                                f"{backend.name}", need, seconds)

    def spectrum(self, network, region, *, tol, temperature=0.0):
        n = region.size
        if n == 0:
            raise UnsupportedMethodError("the two-point route needs a finite region; use "
                                         "method='transverse' for infinite ones")
        require_memory(_two_point_bytes(n), f"the two-point eigenproblem of {n} sites",
                       "use method='auto' (the symplectic route is about 20x cheaper)")
        best = self._backend(network, n, tol, temperature)
        if best is None:
            raise UnsupportedMethodError("no correlator backend serves this network; "
                                         "use method='auto'")
        b = best[0].blocks(network, region.indices, tol=tol, temperature=temperature)
        info = dict(b.info)
        info["blocks_from"] = best[0].name
        return two_point_spectrum(b.x, b.p, **block_error_form(b), info=info)

    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        best = self._backend(network, np.asarray(rows).size, tol, temperature)
        if best is None:
            raise UnsupportedMethodError("no correlator backend serves this network; "
                                         "use method='auto'")
        return best[0].blocks(network, rows, cols, tol=tol, temperature=temperature)
