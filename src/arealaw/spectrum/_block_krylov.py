"""Block Krylov kernels of the restricted solver: P-orthonormal blocks and Ritz values.

Kept apart from :mod:`._restricted` (the iteration and its stopping rule) because they are the
numerically delicate part: Gram–Schmidt in the P_A inner product, rank decisions below rounding,
and the eigenvalues of the block-tridiagonal compression T − ¼I.
"""

import math

import numpy as np
import scipy.linalg

from .._numerics import EPS
from ..correlators import apply_operator

def norm_bound(op, arr, n, rng):
    """Upper estimate of ‖op‖₂ (rigorous max-row-sum for matrices, power estimate ×1.5 else)."""
    if arr is not None:
        return float(np.abs(arr).sum(axis=1).max())
    v = rng.standard_normal(n)
    lam = 0.0
    for _ in range(20):
        v /= np.linalg.norm(v)
        w = np.asarray(op.matvec(v)).ravel()
        lam = float(np.linalg.norm(w))
        v = w
    return 1.5 * lam


def project_out(z, basis, pbasis, pz=None):
    """Classical Gram–Schmidt twice in the P inner product (coefficients Wᵀz need no P z)."""
    c_tot = np.zeros((basis.shape[1], z.shape[1]))
    if basis.shape[1]:
        for _ in range(2):
            c = pbasis.T @ z
            z -= basis @ c
            if pz is not None:
                pz -= pbasis @ c
            c_tot += c
    return c_tot


def normalize_block(z, floor, p_op, pa):
    """z = q r with qᵀPq = I on the kept directions, zero columns / rows for the dropped ones.

    The rank decision and the scaling come from a Euclidean QR + SVD (backward stable, so
    directions far smaller than the largest are resolved); the P-Gram matrix is then only
    asked to normalise orthonormal columns, which is well conditioned (by cond(P_A)).
    Returns (q, pq, r, keep, spread) with ``spread`` the ratio of kept singular values.
    """
    n, b = z.shape
    uq, rr = np.linalg.qr(z)
    uu, ss, vt = np.linalg.svd(rr)
    kk = int(np.count_nonzero(ss > max(floor, 1e-300)))
    q = np.zeros((n, b))
    pq = np.zeros((n, b))
    r = np.zeros((b, b))
    if kk:
        w = uq @ uu[:, :kk]
        pw = apply_operator(p_op, pa, w)
        g = w.T @ pw
        lam, ug = scipy.linalg.eigh(0.5 * (g + g.T))
        inv = 1.0 / np.sqrt(lam)
        q[:, :kk] = (w @ ug) * inv
        pq[:, :kk] = (pw @ ug) * inv
        r[:kk] = (ug * np.sqrt(lam)).T @ (ss[:kk, None] * vt[:kk])
    spread = float(ss[0] / ss[kk - 1]) if kk else math.inf
    return q, pq, r, np.arange(b) < kk, spread


def orthonormalize_block(z, basis, pbasis, scale, rng, p_op, pa):
    """P-orthonormalise block z against ``basis`` and itself: z = basis·h + q·r.

    Gram–Schmidt twice against the basis, then a stable normalisation inside the block
    (:func:`normalize_block`, one product with P).  When the block spans very different
    scales (tiny Lanczos couplings, usual for fast-decaying spectra) a second round restores
    the orthogonality to the basis.  Directions below rounding are dropped and replaced by
    random ones (the caller then keeps T's columns whole); a final QR makes r triangular, so
    T stays banded.  Returns (q, pq, h, r, dropped).
    """
    b = z.shape[1]
    znorm = float(np.linalg.norm(z, axis=0).max(initial=0.0))
    h = project_out(z, basis, pbasis)
    q, pq, r1, keep, spread = normalize_block(z, 1e3 * EPS * max(scale, znorm), p_op, pa)
    dropped = int(b - keep.sum())
    if dropped:
        cols = np.flatnonzero(~keep)
        fill = rng.standard_normal((q.shape[0], dropped))
        project_out(fill, np.hstack([basis, q[:, keep]]), np.hstack([pbasis, pq[:, keep]]))
        # no room left (the basis spans everything): zero columns add only t = 0 Ritz values
        fq, fpq, _, _, _ = normalize_block(fill, 1e-6 * math.sqrt(q.shape[0]), p_op, pa)
        q[:, cols] = fq
        pq[:, cols] = fpq
    elif spread <= 1e3:
        # a well-conditioned block: Gram–Schmidt twice was enough
        o, r = scipy.linalg.qr(r1)
        return q @ o, pq @ o, h, r, dropped
    c2 = project_out(q, basis, pbasis)
    # columns have P-norm ≈ 1 here: a singular value far below 1 is dependence, not signal
    q, pq, r2, keep2, _ = normalize_block(q, 1e-8, p_op, pa)
    h += c2 @ r1
    # triangularise on the kept columns only (mixing in a zero column would denormalise)
    rows = np.flatnonzero(keep2)
    o, r_kept = scipy.linalg.qr((r2 @ r1)[rows])
    q_out = np.zeros_like(q)
    pq_out = np.zeros_like(pq)
    q_out[:, :rows.size] = q[:, rows] @ o
    pq_out[:, :rows.size] = pq[:, rows] @ o
    r = np.zeros_like(r1)
    r[:rows.size] = r_kept
    return q_out, pq_out, h, r, dropped


def band_ritz(diag_blocks, sub_blocks, b):
    """Eigenvalues (descending) of the symmetric block-tridiagonal T − ¼I stored blockwise."""
    m = len(diag_blocks) * b
    band = np.zeros((b + 1, m))
    for j, d in enumerate(diag_blocks):
        s = j * b
        for off in range(b):
            band[off, s:s + b - off] = np.diagonal(d, -off)
    for j, r in enumerate(sub_blocks[:len(diag_blocks) - 1]):
        s = j * b
        # r sits at rows s+b.., cols s..; r upper triangular: entry (i, c) has offset b + i − c
        for off in range(1, b + 1):
            # offset off ⇒ row − col = off; rows s+b+i, cols s+c with b + i − c = off
            i = np.arange(b)
            c = b + i - off
            ok = (c >= 0) & (c < b) & (c >= i)
            band[off, s + c[ok]] = r[i[ok], c[ok]]
    lam = scipy.linalg.eig_banded(band, lower=True, eigvals_only=True)
    return lam[::-1]


def dense_ritz(diag_blocks, sub_blocks, full_cols, b):
    """Eigenvalues (descending) of T − ¼I when some column blocks are full (after random fill)."""
    nb = len(diag_blocks)
    m = nb * b
    t = np.zeros((m, m))
    for j, d in enumerate(diag_blocks):
        t[j * b:(j + 1) * b, j * b:(j + 1) * b] = d
    for j, r in enumerate(sub_blocks[:nb - 1]):
        t[(j + 1) * b:(j + 2) * b, j * b:(j + 1) * b] = r
        t[j * b:(j + 1) * b, (j + 1) * b:(j + 2) * b] = r.T
    for j, h in full_cols.items():
        s = j * b
        t[:s, s:s + b] = h[:s]
        t[s:s + b, :s] = h[:s].T
    t = 0.5 * (t + t.T)
    return scipy.linalg.eigvalsh(t)[::-1]
