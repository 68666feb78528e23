"""Shifted sparse solves (A + σ_j B) Z_j = F for many real shifts, keeping only some rows of Z.

Two engines:

* :func:`multishift_cg` (B = I): one Krylov sequence serves every shift (the shifted residuals
  are collinear with the seed residual), so the cost is that of CG on the smallest shift,
  ∝ √κ per column, and the shifted iterates are kept on the requested rows only.  Each
  iteration works on the rows the Krylov vectors have reached (k hops from the right-hand
  sides' support after k products, :func:`._kernels.hop_distance`): exactly the same numbers,
  and on a large lattice most rows stay untouched for most of the run.
* :func:`amg_shifted_cg` (any SPD B): CG per shift and column, preconditioned with pyamg smoothed
  aggregation (one hierarchy per shift); the cost grows like ln κ (number of shifts), which wins
  for ill-conditioned A.

Both return the kept rows and, per shift and column, the residual norm reached.
"""

import math

import numpy as np
import pyamg
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..._errors import ConvergenceError
from ..._progress import report
from ._kernels import (compact_columns, csr_block_product, direction_update, hop_distance,
                       merge_rows, nonzero_rows, residual_update, rows_by_level)

__all__ = ["amg_shifted_cg", "multishift_cg"]


def _not_pd(what):
    return ValueError(f"{what} is not positive definite (CG met a direction of non-positive "
                      "curvature); check that V and M are symmetric positive definite — a zero "
                      "mode needs a mass or a Dirichlet wall")


def multishift_cg(a, rhs, shifts, keep, *, rtol, maxiter, overwrite_rhs=False):
    """Solve (a + σ_j I) z = f for all shifts σ_j ≥ 0 and columns f of ``rhs`` at once.

    Parameters
    ----------
    a : sparse matrix (n, n), symmetric positive definite
    rhs : ndarray (n, b)
    shifts : ndarray (s,), nonnegative
    keep : ndarray of int
        Rows of the solutions to return.
    rtol : float or ndarray (s,)
        Relative residual ‖f − (a + σ_j) z‖ / ‖f‖ to reach, per shift.
    maxiter : int
    overwrite_rhs : bool
        Let the solver use ``rhs`` (C-ordered float64) as its residual storage instead of a
        copy: one n×b array less to allocate, which matters on 10^7-site lattices.

    Returns
    -------
    z : ndarray (s, len(keep), b)
    resid : ndarray (s, b)
        Residual norms (of the recursively updated residuals) at exit.
    iterations : int
    """
    shifts = np.asarray(shifts, dtype=float)
    n_s = shifts.size
    rtol = np.broadcast_to(np.asarray(rtol, dtype=float), (n_s,))
    seed = float(shifts.min())
    delta = shifts - seed
    n, b = rhs.shape
    z_out = np.zeros((n_s, keep.size, b))
    resid_out = np.zeros((n_s, b))
    bnorm = np.linalg.norm(rhs, axis=0)
    target = rtol[:, None] * bnorm[None, :]
    cols = np.arange(b)
    a_seed = (a + seed * sp.identity(n, format="csr")).tocsr() if seed else a.tocsr()
    csr = (a_seed.indptr, a_seed.indices, np.asarray(a_seed.data, dtype=float))
    in_place = overwrite_rhs and rhs.dtype == np.float64 and rhs.flags.c_contiguous
    r = rhs if in_place else np.array(rhs, dtype=float, order="C")
    # the light cone: rows within k hops of the right-hand sides' support after k products
    hops = hop_distance(csr[0], csr[1], nonzero_rows(r))
    order, start = rows_by_level(hops)
    reach = start.size - 2
    # No n×b array is allocated after these three, and none is copied whole: on a large lattice
    # a fresh one costs more in page faults (the kernel clearing pages) than the iterations that
    # use it.  Measured on one block of 32 columns of the 10^6-site ball: 7.7-8.2 s with a copy
    # per finished group of columns (three groups; 30 % of it system time) against 4.3-4.9 s.
    row_buffers = np.empty(n, dtype=np.int64), np.empty(n, dtype=np.int64)
    rows = order[start[0]:start[1]]
    p = np.zeros(r.shape)  # zero pages mapped lazily: only the rows the Krylov vectors reach
    p[rows] = r[rows]
    ap = np.empty_like(r)
    flat = r.reshape(-1), p.reshape(-1), ap.reshape(-1)
    rr = np.einsum("ij,ij->j", r, r)
    pap = np.empty(b)
    rr_new = np.empty(b)
    # π_k = R_k(−δ) (CG residual polynomial at −δ); shifted residual = r_k / π_k.
    pi_prev = np.ones((n_s, b))
    pi = np.ones((n_s, b))
    alpha_prev = np.ones(b)
    beta_prev = np.zeros(b)
    xs = np.zeros((n_s, keep.size, b))
    ps = np.broadcast_to(r[keep], (n_s, keep.size, b)).copy()
    frozen = np.zeros((n_s, b), dtype=bool)
    it = 0
    while True:
        res = np.sqrt(np.maximum(rr, 0.0))[None, :] / np.abs(pi)
        done = res <= target
        frozen |= done
        if it % 8 == 0:
            _report_residual(res, bnorm[cols], frozen, float(rtol.min()))
        if np.all(frozen, axis=0).any() or it >= maxiter:
            fin = np.all(frozen, axis=0) if it < maxiter else np.ones(cols.size, dtype=bool)
            z_out[:, :, cols[fin]] = xs[:, :, fin]
            resid_out[:, cols[fin]] = res[:, fin]
            if it >= maxiter and not np.all(frozen):
                worst = float(np.max(resid_out / np.maximum(bnorm, 1e-300)[None, :]))
                raise ConvergenceError(
                    f"multishift CG did not converge in maxiter={maxiter} iterations: relative "
                    f"residual {worst:.3g} (target {float(rtol.min()):.3g}); raise maxiter or tol",
                    residual=worst, iterations=it)
            keep_cols = ~fin
            if not keep_cols.any():
                return z_out, resid_out, it
            # r and p vanish beyond `it` hops; their unfinished columns move to the front of
            # their own storage (ap holds nothing between iterations)
            kept = np.flatnonzero(keep_cols)
            compact_columns(flat[0], n, cols.size, kept, hops, it)
            compact_columns(flat[1], n, cols.size, kept, hops, it)
            r, p, ap = (f[:n * kept.size].reshape(n, kept.size) for f in flat)
            cols, rr = cols[keep_cols], rr[keep_cols]
            pap, rr_new = np.empty(cols.size), np.empty(cols.size)
            pi_prev, pi = pi_prev[:, keep_cols], pi[:, keep_cols]
            alpha_prev, beta_prev = alpha_prev[keep_cols], beta_prev[keep_cols]
            xs, ps, frozen = xs[:, :, keep_cols], ps[:, :, keep_cols], frozen[:, keep_cols]
            target = target[:, keep_cols]
        it += 1
        if it <= reach:  # the rows reached so far and the next level, merged (ascending)
            out = row_buffers[it % 2]
            rows = out[:merge_rows(rows, order[start[it]:start[it + 1]], out)]
        csr_block_product(*csr, p, ap, pap, rows)  # fused kernels: the n×b passes dominate
        if not np.all(pap > 0):
            raise _not_pd("the shifted matrix")
        alpha = rr / pap
        c = alpha * beta_prev / alpha_prev
        pi_next = (1.0 + c + alpha * delta[:, None]) * pi - c * pi_prev
        active = ~frozen
        ratio = np.where(active, pi / np.where(active, pi_next, 1.0), 0.0)  # ζ_{k+1}/ζ_k
        xs += (alpha * ratio)[:, None, :] * ps
        residual_update(r, ap, alpha, rr_new, rows)
        beta = rr_new / rr
        ps *= (beta * ratio ** 2)[:, None, :]
        ps += np.where(active, 1.0 / np.where(active, pi_next, 1.0), 0.0)[:, None, :] * r[keep]
        direction_update(p, r, beta, rows)
        pi_prev, pi = pi, np.where(active, pi_next, pi)
        pi_prev = np.where(active, pi_prev, 1.0)
        alpha_prev, beta_prev, rr = alpha, beta, rr_new.copy()


def amg_shifted_cg(a, b_mat, shifts, rhs_of_shift, keep, *, rtol, maxiter):
    """Solve (a + σ_j b_mat) z = f_j(σ_j) per shift with pyamg-preconditioned CG per column.

    ``rhs_of_shift(σ)`` returns the dense (n, m) right-hand sides for shift σ; ``b_mat`` is
    None for the identity.  Returns (z (s, len(keep), m), resid (s, m), iterations) with the
    true residual norms of the returned solutions.
    """
    shifts = np.asarray(shifts, dtype=float)
    rtol = np.broadcast_to(np.asarray(rtol, dtype=float), shifts.shape)
    n = a.shape[0]
    eye = sp.identity(n, format="csr") if b_mat is None else b_mat
    z_out, resid_out, total = None, None, 0
    for j, sigma in enumerate(shifts):
        h = (a + sigma * eye).tocsr()
        f = rhs_of_shift(sigma)
        if z_out is None:
            z_out = np.zeros((shifts.size, keep.size, f.shape[1]))
            resid_out = np.zeros((shifts.size, f.shape[1]))
        diag = h.diagonal()
        if np.any(diag <= 0):
            raise _not_pd("the shifted matrix")
        # Far above the spectrum, h is diagonally dominant and Jacobi is as good as AMG.
        off = np.asarray(abs(h).sum(axis=1)).ravel() - diag
        if np.all(off <= 0.5 * diag) or n < 64:
            prec = spla.LinearOperator(h.shape, matvec=lambda x, d=diag: x.ravel() / d)
        else:
            prec = pyamg.smoothed_aggregation_solver(h, symmetry="symmetric").aspreconditioner()
        for col in range(f.shape[1]):
            fc = f[:, col]
            fn = float(np.linalg.norm(fc))
            if fn == 0:
                continue
            count = [0]

            def cb(_xk, count=count):
                count[0] += 1

            x, _info = spla.cg(h, fc, rtol=float(rtol[j]), atol=0.0, maxiter=maxiter, M=prec,
                               callback=cb)
            total += count[0]
            res = float(np.linalg.norm(fc - h @ x))
            if res > 1.5 * rtol[j] * fn:
                if not np.isfinite(res) or np.dot(x, h @ x) <= 0:
                    raise _not_pd("the shifted matrix")
                raise ConvergenceError(
                    f"AMG-preconditioned CG did not converge in maxiter={maxiter} iterations at "
                    f"shift {sigma:.3g}: relative residual {res / fn:.3g} (target "
                    f"{float(rtol[j]):.3g}); raise maxiter or tol", residual=res / fn,
                    iterations=count[0])
            z_out[j, :, col] = x[keep]
            resid_out[j, col] = res
        report("shifted solves", j + 1, shifts.size)
    return z_out, resid_out, total


def _report_residual(res, bnorm, frozen, rtol):
    """Progress of the shifted solves as the fraction of the way (in log residual) to rtol."""
    rel = np.where(frozen, 0.0, res / np.maximum(bnorm, np.finfo(float).tiny)[None, :])
    worst = float(rel.max()) if rel.size else 0.0
    frac = 1.0 if worst <= rtol else max(0.0, min(1.0, math.log(worst) / math.log(rtol)))
    report("shifted solves", frac, 1.0)
