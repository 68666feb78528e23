"""General sparse correlators: contour quadrature of V^{-1/2} with shifted solves on a Schur complement.

With K = M^{-1/2} V M^{-1/2} and K^{-1/2} = (2/π) ∫₀^∞ (t² + K)^{-1} dt,

    X = ½ M^{-1/2} K^{-1/2} M^{-1/2} = (1/π) ∫₀^∞ (V + t² M)^{-1} dt ≈ ½ Σ_j w_j (V + σ_j M)^{-1},

with the Hale–Higham–Trefethen (2008) nodes σ_j > 0, w_j > 0 (:mod:`._contour`), and P = V X M.
Only a block of each (V + σM)^{-1} is needed.  With C the core sites and B the rest, the Schur
complement gives [(H)^{-1}]_CC = (H_CC − H_CB H_BB^{-1} H_BC)^{-1}, H = V + σM, and H_BC touches
only the sites of B next to C: the shifted solves have one right-hand side per inner-boundary site
of C (not per site), and only the outer-boundary rows of their solutions are kept.  P needs no
extra solves: K^{1/2} ≈ Σ_j w_j (I − σ_j (K + σ_j)^{-1}) uses the same core blocks.

Gibbs states at temperature T > 0 replace K^{-1/2} by coth(K^{1/2}/2T) K^{-1/2}, whose rule
(:mod:`._matsubara`: Matsubara frequencies σ_n = (2πnT)² plus a Gauss rule for their tail, with a
rigorous one-sided bound) has the same form Σ_j w_j (K + σ_j)^{-1}: the shifted solves, the
Schur complement and the assembly of X and P are unchanged.

Engines for the solves with H_BB (chosen by the condition number κ and the structure of M):

* ``'multishift'`` (diagonal M, moderate κ): M is scaled to the identity and one multishift CG
  run serves every shift, cost ∝ √κ — a Lanczos-class method that keeps only boundary rows.
* ``'amg'`` (general M, or large κ): CG per shift preconditioned with pyamg smoothed
  aggregation; the number of shifts grows like ln κ.

Column blocks of right-hand sides are independent work units (:mod:`arealaw._parallel`): local
processes or dask.distributed workers as the caller asks (``entropy(..., workers=, scheduler=)``),
otherwise all usable cores for large problems; BLAS pinned to one thread in each.
"""

import math
import warnings
import weakref
from dataclasses import dataclass

import numpy as np
import scipy.linalg
import scipy.sparse as sp
from threadpoolctl import threadpool_limits

from ..._errors import UnsupportedMethodError
from ..._costs import cost
from ..._numerics import EPS, available_bytes, fits_in_memory, format_bytes, require_memory
from ..._parallel import current_parallelism, map_units, width
from .._base import Assessment, Blocks, CorrelatorBackend
from .._temperature import check_temperature
from ._contour import inverse_sqrt_rule
from ._interval import exactly_symmetric, gershgorin, is_diagonal, pencil_interval
from ._matsubara import matsubara_poles_estimate, matsubara_rule
from ._plan import (block_plan, column_blocks, engine_seconds, has_diagonal_m, problem_size,
                    site_coords)
from ._shifted import amg_shifted_cg, multishift_cg

__all__ = ["IllConditionedWarning", "SparseBackend"]

#: Condition numbers above this trigger :class:`IllConditionedWarning`.
ILL_CONDITIONED = 1e8
#: Most poles of the thermal (Matsubara) rule; lower temperatures are refused.
_MAX_THERMAL_POLES = 400
@dataclass(frozen=True)
class _Pencil:
    """What :meth:`SparseBackend._prepare` learns about (V, M) once per network.

    With diagonal M (``diag``) the solves use A = M^{-1/2} V M^{-1/2} and ``d`` = diag(M);
    otherwise V itself (``a``) and M (``m``).  [lo, hi] encloses the spectrum of the pencil
    (V, M), [m_lo, m_hi] that of M (1, 1 when M is diagonal, already scaled out).
    """

    diag: bool
    a: object
    lo: float
    hi: float
    interval: dict
    d: np.ndarray = None
    m: object = None
    m_lo: float = 1.0
    m_hi: float = 1.0


class IllConditionedWarning(UserWarning):
    """V is nearly singular (tiny mass): many poles and slow solves; the results stay bounded."""


class SparseBackend(CorrelatorBackend):
    """Correlator blocks of any network with sparse SPD V and M (no symmetry assumed).

    Parameters
    ----------
    engine : {'auto', 'multishift', 'amg'}
        Solver for the shifted systems (see the module notes); 'auto' chooses by κ and M.
    rtol : float, optional
        Relative residual of the shifted solves (default: derived from ``tol``).
    maxiter : int, optional
        Iteration limit of the solves (default: from κ); exceeding it raises
        :class:`~arealaw.ConvergenceError` with the residual reached.
    n_jobs : int, optional
        Worker processes for column blocks when the caller installed no parallel setting
        (:func:`arealaw._parallel.parallel_work`; default: all cores, only for large problems).
    block_size : int
        Right-hand sides per block of the multishift engine.

    Examples
    --------
    >>> from arealaw import hypercubic
    >>> from arealaw.correlators import SparseBackend, dense_correlators
    >>> net = hypercubic((6, 6), mass=0.5)
    >>> b = SparseBackend().blocks(net, [14, 15], tol=1e-10)
    >>> x, p, _ = dense_correlators(net)
    >>> bool(abs(b.x - x[14:16, 14:16]).max() < 1e-9 and b.x_error < 1e-8)
    True
    """

    name = "sparse"

    def __init__(self, *, engine="auto", rtol=None, maxiter=None, n_jobs=None, block_size=32):
        if engine not in ("auto", "multishift", "amg"):
            raise ValueError(f"engine={engine!r}; choose 'auto', 'multishift' or 'amg'")
        self.engine = engine
        self.rtol = rtol
        self.maxiter = maxiter
        self.n_jobs = n_jobs
        self.block_size = int(block_size)
        self._cache = (lambda: None, None)

    # -- cost model ----------------------------------------------------------------------------
    def assess(self, network, n_rows, *, tol, temperature=0.0):
        if network.is_infinite:
            return Assessment(False, "the sparse method needs a finite network (V is not formed "
                                     "for an infinite lattice); use method='spectral'")
        size = problem_size(network, n_rows, self._kappa_guess)
        if isinstance(size, str):
            return Assessment(False, size)
        nnz, kappa, n_rhs = size
        n = network.n_sites
        if temperature > 0:
            poles = matsubara_poles_estimate(network, temperature)
            if poles > _MAX_THERMAL_POLES:
                return Assessment(False, f"temperature={temperature:g} is too low for the "
                                         f"Matsubara rule (about {poles:.0f} poles, limit "
                                         f"{_MAX_THERMAL_POLES}); use method='dense' or "
                                         "'spectral'")
        solves = self._engine_seconds(network, nnz, n_rhs, kappa, tol, n_rows)
        engine = self.engine if self.engine != "auto" else min(solves, key=solves.get)
        if engine not in solves:  # multishift asked for a non-diagonal M: blocks() refuses
            engine = "amg"
        seconds = (solves[engine]
                   + cost("sparse.dense_cube") * float(n_rows) ** 3
                   + cost("sparse.overhead") + cost("sparse.setup_nnz") * nnz)
        sizes, jobs, nbytes = self._block_plan(n, max(int(n_rhs), 1), nnz)
        nbytes += 8.0 * 3 * n_rows ** 2  # dense core blocks
        if not fits_in_memory(nbytes):
            return Assessment(False, f"needs about {format_bytes(nbytes)} for {n} sites (the "
                                     f"matrices and blocks of {max(sizes)} right-hand sides on "
                                     f"{jobs} workers); {format_bytes(available_bytes())} "
                                     "available: use a smaller lattice or free memory", nbytes)
        return Assessment(True, f"contour quadrature + shifted CG on {n} sites "
                                f"(κ ≈ {kappa:.2g}, {engine} engine)", nbytes, seconds)

    def engine_estimates(self, network, n_rows, *, tol):
        """Estimated seconds of the shifted solves by each engine that can serve ``network``.

        What ``engine='auto'`` compares (:func:`engine_seconds`; constants fitted to
        ``benchmarks/bench_engines.py``): multishift CG only for diagonal M.

        Examples
        --------
        >>> from arealaw import hypercubic
        >>> est = SparseBackend().engine_estimates(hypercubic((16, 16, 16), mass=0.3), 100,
        ...                                        tol=1e-10)
        >>> sorted(est), bool(est["multishift"] < est["amg"])
        (['amg', 'multishift'], True)
        """
        size = problem_size(network, n_rows, self._kappa_guess)
        if isinstance(size, str):
            raise UnsupportedMethodError(size)
        nnz, kappa, n_rhs = size
        return self._engine_seconds(network, nnz, n_rhs, kappa, tol, n_rows)

    def _engine_seconds(self, network, nnz, n_rhs, kappa, tol, n_rows, n_poles=None):
        # the one call of the engines' cost model: assess, engine_estimates and the choice
        return engine_seconds(nnz, n_rhs, kappa, tol, n_sites=network.n_sites,
                              ndim=network.ndim or 3, diagonal_m=has_diagonal_m(network),
                              n_poles=n_poles, block_size=self.block_size,
                              region_sites=n_rows)

    def _kappa_guess(self, network):
        ref, cached = self._cache
        if ref() is network:
            return cached.hi / cached.lo
        lo, hi = gershgorin(network.potential)
        d = network.ndim or 3
        lo = max(lo, hi / max(network.n_sites, 2) ** (2.0 / d))
        return hi / lo

    # -- setup (cached per network) ------------------------------------------------------------
    def _prepare(self, network):
        ref, cached = self._cache
        if ref() is network:
            return cached
        v, m = network.potential, network.kinetic
        diag_m = m is None or is_diagonal(m)
        if diag_m:
            d = np.ones(v.shape[0]) if m is None else m.diagonal()
            if np.any(d <= 0):
                raise ValueError("kinetic M is not positive definite (a diagonal entry is <= 0)")
            if np.all(d == 1) and exactly_symmetric(v):
                a = v  # M = I and V symmetric to the bit: A is V (no copy of a 10^7-site V)
            else:
                s = sp.diags(1 / np.sqrt(d))
                a = (s @ v @ s).tocsr()
                a = (0.5 * (a + a.T)).tocsr()
            lo, hi, info = pencil_interval(a)
            prep = _Pencil(diag=True, a=a, d=d, lo=lo, hi=hi, interval=info)
        else:
            lo, hi, info = pencil_interval(v, m)
            m_lo, m_hi = info["kinetic_interval"]  # proven with the pencil's, not again
            prep = _Pencil(diag=False, a=v, m=m, lo=lo, hi=hi, m_lo=m_lo, m_hi=m_hi,
                           interval=info)
        self._cache = (weakref.ref(network), prep)
        return prep

    # -- blocks --------------------------------------------------------------------------------
    def blocks(self, network, rows, cols=None, *, tol, temperature=0.0):
        temperature = check_temperature(temperature)
        if network.is_infinite:
            raise UnsupportedMethodError("the sparse method needs a finite network; an infinite "
                                         "lattice is served by method='spectral'")
        rows = np.asarray(rows, dtype=np.int64)
        cols = rows if cols is None else np.asarray(cols, dtype=np.int64)
        n = network.n_sites
        for name, idx in (("rows", rows), ("cols", cols)):
            if idx.size and (idx.min() < 0 or idx.max() >= n):
                raise ValueError(f"{name} contains site indices outside 0..{n - 1}")
        union = np.union1d(rows, cols)
        if network.potential is None:
            raise UnsupportedMethodError("V of this lattice is too large to form; use "
                                         "method='spectral'")
        prep = self._prepare(network)
        lo, hi = prep.lo, prep.hi
        kappa = hi / lo
        if temperature > 0:
            rule = matsubara_rule(lo, hi, temperature, tol=0.25 * tol,
                                  max_nodes=_MAX_THERMAL_POLES)
        else:
            rule = inverse_sqrt_rule(lo, hi, tol=0.25 * tol)
        engine = self._choose_engine(prep, kappa, rule.n_nodes, tol, network, union.size)
        if kappa > ILL_CONDITIONED:
            warnings.warn(f"V is ill-conditioned: condition number of the pencil (V, M) about "
                          f"{kappa:.3g}; using {rule.n_nodes} poles and the {engine!r} engine "
                          "(add a mass or Dirichlet walls for a faster, better-conditioned "
                          "problem)", IllConditionedWarning, stacklevel=2)
        if prep.diag:
            core = union
        else:
            # P needs (V + σM)^{-1} on the M-neighbourhood of the sites (see _assemble_general).
            core = np.union1d(union, prep.m[union].indices)
        core_coords = site_coords(network, core)  # columns near each other share a block
        y_cc, y_sig, err, diag_info = self._schur(prep, core, rule, engine, tol, core_coords)
        if prep.diag:
            x, p, x_err, p_err, hx, hp = self._assemble_diag(prep, union, y_cc, y_sig, err, rule)
        else:
            x, p, x_err, p_err, hx, hp = self._assemble_general(network, prep, union, core, y_cc,
                                                                y_sig, err, rule)
        ri = np.searchsorted(union, rows)
        ci = np.searchsorted(union, cols)
        info = {"engine": engine, "poles": rule.n_nodes, "spectral_interval": (lo, hi),
                "temperature": temperature,
                "condition_number": kappa, "quadrature_rel_error": rule.rel_error,
                "interval_method": prep.interval["method"], **diag_info}
        square = np.array_equal(rows, cols)
        return Blocks(x[np.ix_(ri, ci)], p[np.ix_(ri, ci)], float(x_err), float(p_err), info,
                      x_dominant=hx[np.ix_(ri, ri)] if square and temperature == 0 else None,
                      p_dominant=hp[np.ix_(ri, ri)] if square and temperature == 0 else None)

    def _choose_engine(self, prep, kappa, n_poles, tol, network, n_rows):
        if self.engine != "auto":
            if self.engine == "multishift" and not prep.diag:
                raise ValueError("engine='multishift' needs a diagonal kinetic matrix M; use "
                                 "engine='amg' or 'auto'")
            return self.engine
        if not prep.diag:
            return "amg"
        n_rhs = problem_size(network, n_rows, lambda _: kappa)[2]
        est = self._engine_seconds(network, prep.a.nnz, n_rhs, kappa, tol, n_rows, n_poles)
        return min(est, key=est.get)

    def _rtol(self, tol, kappa):
        if self.rtol is not None:
            return float(self.rtol)
        return float(min(1e-3, max(1e-13, 1e-2 * tol / math.sqrt(kappa))))

    def _maxiter(self, kappa, rtol, engine):
        if self.maxiter is not None:
            return int(self.maxiter)
        if engine == "amg":
            return 500
        return int(20 + 2 * math.sqrt(kappa) * math.log(2 / rtol))

    # -- the Schur complement on the core ------------------------------------------------------
    def _schur(self, prep, core, rule, engine, tol, core_coords=None):
        """Σ_j ½ w_j Y_j and Σ_j ½ w_j σ_j Y_j, Y_j = [(V + σ_j M)^{-1}]_CC, with error bounds."""
        a = prep.a
        m = None if prep.diag else prep.m
        n = a.shape[0]
        in_core = np.zeros(n, dtype=bool)
        in_core[core] = True
        rest = np.flatnonzero(~in_core)
        c = core.size
        require_memory(8.0 * (rule.n_nodes + 3) * c * c, f"the dense core blocks of {c} sites",
                       "use a smaller region")
        a_cc = a[core][:, core].toarray()
        m_cc = np.eye(c) if m is None else m[core][:, core].toarray()
        coupling = abs(a[rest][:, core]) if m is None else abs(a[rest][:, core]) + \
            abs(m[rest][:, core])
        coupling = coupling.tocsr()
        outer_local = np.flatnonzero(np.diff(coupling.indptr))  # rows of B next to the core
        inner = np.unique(coupling.indices)  # core positions next to B
        outer = rest[outer_local]
        shifts, weights = rule.shifts, rule.weights
        lam_h = (prep.lo + shifts) * prep.m_lo  # λ_min(V + σM) ≥ (λ_lo + σ) μ_min(M)
        rtol = self._rtol(tol, rule.hi / rule.lo)
        maxiter = self._maxiter(rule.hi / rule.lo, rtol, engine)
        info = {"core_sites": int(c), "boundary_rhs": int(inner.size),
                "outer_rows": int(outer.size), "solver_rtol": rtol}
        n_s = shifts.size
        if rest.size and inner.size:
            a_rest = a[rest]
            a_bj = a_rest[:, core[inner]].tocsc()
            a_bb = a_rest[:, rest].tocsr()
            del a_rest
            solve_shifts = shifts
            if engine == "multishift" and shifts.min() > 0:
                # the seed system A_BB + σ₀I in place, once (the diagonal of an SPD matrix is
                # stored): multishift_cg would form a copy per worker from σ₀ > 0 otherwise;
                # the same sums, so the same iterates
                seed = float(shifts.min())
                a_bb.setdiag(a_bb.diagonal() + seed)
                solve_shifts = shifts - seed
            m_bb = None if m is None else m[rest][:, rest].tocsr()
            m_bj = None if m is None else m[rest][:, core[inner]].tocsc()
            points = None if core_coords is None else core_coords[inner]
            z, resid, iters = self._solve(engine, a_bb, m_bb, a_bj, m_bj, solve_shifts,
                                          outer_local, rtol, maxiter, points)
            info["iterations"] = int(iters)
            a_jr = a[core[inner]][:, outer].toarray()
            m_jr = None if m is None else m[core[inner]][:, outer].toarray()
        else:
            z = np.zeros((n_s, 0, inner.size))
            resid = np.zeros((n_s, inner.size))
            a_jr = m_jr = np.zeros((inner.size, 0))
            info["iterations"] = 0
        y_cc = np.zeros((c, c))
        y_sig = np.zeros((c, c))
        # Loewner-dominating error blocks of Σ w Y and Σ w σ Y (see below)
        h_cc = np.zeros((c, c))
        h_sig = np.zeros((c, c))
        e_cc = e_sig = w_sum = 0.0
        for j, sigma in enumerate(shifts):
            h_jr = a_jr if m_jr is None else a_jr + sigma * m_jr
            s = a_cc + sigma * m_cc
            corr = h_jr @ z[j]
            s[np.ix_(inner, inner)] -= corr
            s = 0.5 * (s + s.T)
            try:
                fac = scipy.linalg.cho_factor(s, lower=True)
            except np.linalg.LinAlgError:
                raise ValueError("the Schur complement of V + σM is not positive definite: V "
                                 "or M is not symmetric positive definite") from None
            yj = scipy.linalg.cho_solve(fac, np.eye(c))
            yj = 0.5 * (yj + yj.T)
            wj = 0.5 * weights[j]
            y_cc += wj * yj
            # Error bounds (spectral norms; Frobenius where cheaper): δZ = H_BB^{-1} R, so
            # ‖δZ‖ ≤ ‖R‖_F/λ_H; δS = H_JR δZ_R; Ỹ − Y = Ỹ δS Y with ‖Y‖ ≤ 1/λ_H.
            lh = lam_h[j]
            res_f = float(np.sqrt(np.sum(resid[j] ** 2)))
            e_z = res_f / lh + 4 * math.sqrt(max(info["iterations"], 1)) * EPS * res_f / lh
            h_norm = _norm2_bound(h_jr)
            # δS = H_JR H_BB^{-1} R: ‖δS‖ ≤ ‖H_BB^{-1/2} H_RJ‖·‖R‖_F/√λ_H, and
            # ‖H_BB^{-1/2} H_RJ‖² = ‖H_JR H_BB^{-1} H_RJ‖ ≤ ‖computed correction‖ + ‖δS‖
            # (a √λ_H instead of λ_H: the residual cannot lie along the softest mode twice)
            a_r = res_f / math.sqrt(lh)
            c_norm = _norm2_bound(corr) if corr.size else 0.0
            e_form = a_r * math.sqrt(c_norm + a_r * a_r) + a_r * a_r
            e_solve = min(h_norm * e_z, e_form)
            e_round = 8 * math.sqrt(c) * EPS * (float(np.abs(s).sum(axis=1).max()))
            e_s = e_solve + e_round
            # Crude but always valid: ‖Ỹ − Y‖ ≤ ‖Ỹ‖ + ‖Y‖ (‖Ỹ‖ ≤ its largest absolute row sum).
            e_y = float(np.abs(yj).sum(axis=1).max()) + 1 / lh
            if e_s < 0.5 * lh:
                e_y = min(e_y, e_s / lh ** 2 / (1 - e_s / lh))
            e_cc += wj * e_y
            # relative form: ‖δS‖ ≤ η·λ_min(S) with η = e_s/λ_H gives (1 − η)S ⪯ S̃ ⪯ (1 + η)S,
            # hence −η Ỹ ⪯ Y − Ỹ ⪯ η Ỹ; beyond η = ½ only −Y ⪯ Ỹ − Y ⪯ Ỹ (Y ⪯ I/λ_H)
            # the solve error lives on the boundary block J only: ‖Y^{1/2} δS Y^{1/2}‖ ≤
            # ‖δS‖·‖Y_JJ‖ (Y_JJ ⪯ Ỹ_JJ/(1 − η)), far below ‖δS‖/λ_H; rounding of the
            # factorisation is global: ‖δS‖/λ_H
            y_jj = _norm2_bound(yj[np.ix_(inner, inner)]) if inner.size else 0.0
            g = e_solve * y_jj
            eta = (g / (1 - g) if g < 0.5 else math.inf) + e_round / lh
            hj = eta * yj if eta < 0.5 else yj + np.eye(c) / lh
            h_cc += wj * hj
            h_sig += (wj * sigma) * hj
            y_sig += (wj * sigma) * yj
            e_sig += wj * sigma * e_y
            w_sum += wj
        err = {"x_cc": e_cc, "sigma": e_sig, "w_sum": w_sum, "h_cc": h_cc, "h_sig": h_sig}
        return y_cc, y_sig, err, info

    def _block_plan(self, n, n_rhs, nnz):
        """(block sizes, workers, peak bytes) of the multishift solves: see :func:`block_plan`."""
        par = current_parallelism()
        jobs = width(self.n_jobs or (-1 if nnz * n_rhs > 2e8 and n_rhs > 1 else 1))
        chosen = self.n_jobs is not None or not (par is None or par.is_automatic)
        return block_plan(n, n_rhs, nnz, block_size=self.block_size, n_jobs=jobs,
                          may_reduce=not chosen)

    def _solve(self, engine, a_bb, m_bb, a_bj, m_bj, shifts, keep, rtol, maxiter, points=None):
        n_rhs = a_bj.shape[1]
        if engine == "multishift":
            sizes, n_jobs, nbytes = self._block_plan(a_bb.shape[0], n_rhs, a_bb.nnz)
            chunks = column_blocks(sizes, points)
            n_jobs = min(n_jobs, len(chunks))
            par = current_parallelism()
            if par is None or par.scheduler is None:
                # local processes share this machine's memory (a cluster's workers their own)
                require_memory(nbytes, f"multishift CG in {len(chunks)} blocks of up to "
                               f"{max(sizes)} right-hand sides on {n_jobs} workers",
                               "use a smaller lattice, free memory "
                               "or workers=1 (--workers 1)")
            # one unit per column block: each column's recurrence is independent of the others
            # in its block, so any split (and any worker) gives the same numbers bit for bit
            out = map_units(_multishift_chunk,
                            [(a_bb, a_bj[:, sl], shifts, keep, rtol, maxiter) for sl in chunks],
                            auto=n_jobs, stage="shifted solves", shared=(a_bb,))
            back = np.argsort(np.concatenate(chunks))  # the columns in their given order again
            z = np.concatenate([o[0] for o in out], axis=2)[:, :, back]
            resid = np.concatenate([o[1] for o in out], axis=1)[:, back]
            return z, resid, max(o[2] for o in out)

        def rhs(sigma):
            f = a_bj if m_bj is None else a_bj + sigma * m_bj
            return f.toarray()

        return amg_shifted_cg(a_bb, m_bb, shifts, rhs, keep, rtol=rtol, maxiter=maxiter)

    # -- assembly of X and P -------------------------------------------------------------------
    def _assemble_diag(self, prep, union, y_cc, y_sig, err, rule):
        # K^{1/2} ≈ Σ w_j K (K + σ_j)^{-1} = Σ w_j (I − σ_j (K + σ_j)^{-1}): P' = ½ K^{1/2} on the
        # core needs only the core blocks Y_j (no detour through V' X', whose bound is weaker).
        d = prep.d
        c = union.size
        p_s = err["w_sum"] * np.eye(c) - y_sig
        p_s = 0.5 * (p_s + p_s.T)
        sq = np.sqrt(d[union])
        x = y_cc / sq[:, None] / sq[None, :]
        p = p_s * sq[:, None] * sq[None, :]
        x_err = (err["x_cc"] + 0.5 * rule.abs_error) / float(d[union].min())
        p_err = (err["sigma"] + 0.5 * rule.x_abs_error
                 + 8 * c * EPS * err["w_sum"]) * float(d[union].max())
        # Loewner form: solve errors per shift (relative to Ỹ_j), the quadrature's relative
        # error |r(λ)√λ − 1| ≤ rel (a function of K, so ±rel·X and ±rel·P), and the rounding of
        # w_sum·I − Σ wσY as a multiple of I (√c model); congruence by D^{∓1/2} keeps the order
        rel = 1.01 * rule.rel_error
        hx = err["h_cc"] / sq[:, None] / sq[None, :] + rel * x
        hp = (err["h_sig"] + 8 * math.sqrt(c) * EPS * err["w_sum"] * np.eye(c)) \
            * sq[:, None] * sq[None, :] + rel * p
        return x, p, x_err, p_err, hx, hp

    def _assemble_general(self, network, prep, union, core, y_cc, y_sig, err, rule):
        # P = ½ M^{1/2} K^{1/2} M^{1/2} ≈ ½ Σ w_j (M − σ_j M (V + σ_j M)^{-1} M).
        m = prep.m
        ui = np.searchsorted(core, union)
        m_uc = m[union][:, core].toarray()
        x = y_cc[np.ix_(ui, ui)]
        p = err["w_sum"] * m[union][:, union].toarray() - m_uc @ y_sig @ m_uc.T
        p = 0.5 * (p + p.T)
        m_norm = _norm2_bound(m_uc)
        x_err = err["x_cc"] + 0.5 * rule.abs_error / prep.m_lo
        p_err = (m_norm ** 2 * err["sigma"] + 0.5 * rule.x_abs_error * prep.m_hi
                 + 8 * core.size * EPS * err["w_sum"] * max(1.0, m_norm ** 2))
        rel = 1.01 * rule.rel_error
        hx = err["h_cc"][np.ix_(ui, ui)] + rel * x
        hp = m_uc @ err["h_sig"] @ m_uc.T + rel * p + (
            8 * math.sqrt(core.size) * EPS * err["w_sum"] * max(1.0, m_norm ** 2)) * np.eye(ui.size)
        return x, p, x_err, p_err, hx, hp


def _norm2_bound(a):
    """‖a‖₂ ≤ √(‖a‖₁ ‖a‖_∞)."""
    if a.size == 0:
        return 0.0
    aa = np.abs(a)
    return math.sqrt(float(aa.sum(axis=0).max()) * float(aa.sum(axis=1).max()))


def _multishift_chunk(a_bb, f_sparse, shifts, keep, rtol, maxiter):
    with threadpool_limits(limits=1):
        return multishift_cg(a_bb, f_sparse.toarray(order="C"), shifts, keep, rtol=rtol,
                             maxiter=maxiter, overwrite_rhs=True)
