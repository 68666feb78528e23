"""Fused block kernels of the CG recurrence (one pass over memory per step, no temporaries).

The multishift CG of :mod:`._shifted` on a block of b right-hand sides is bound by memory
bandwidth: with numpy each step of the recurrence (the sparse product, the b inner products,
the residual and direction updates with per-column scalars) is a separate pass over n×b arrays,
plus a zero-filled output per product — about 16 passes per iteration.  These kernels fuse them
into three passes (product with its inner products; residual update with its norms; direction
update), each compiled by numba.  They perform the same floating-point operations as the numpy
recurrence up to the order of summation of the inner products, so the rounding analysis of the
residuals (recursively updated, bounded a posteriori) is unchanged.
"""

import numba
import numpy as np

__all__ = ["csr_block_product", "direction_update", "residual_update"]

#: Reassociation and fused multiply-add only (no assumptions on NaN or infinities): the
#: rounding of each sum stays within the usual n·ε model, and a NaN still reaches the caller.
_FLAGS = {"reassoc", "contract"}


@numba.njit(cache=True, nogil=True, fastmath=_FLAGS)
def csr_block_product(indptr, indices, data, p, out, pap):  # pragma: no cover (compiled)
    """out = A p for CSR A and a C-ordered block p (n, b); pap[c] = p[:, c]·out[:, c]."""
    n, b = p.shape
    for c in range(b):
        pap[c] = 0.0
    for i in range(n):
        row = out[i]
        row[:] = 0.0
        for k in range(indptr[i], indptr[i + 1]):
            v = data[k]
            pj = p[indices[k]]
            for c in range(b):
                row[c] += v * pj[c]
        pi = p[i]
        for c in range(b):
            pap[c] += pi[c] * row[c]


@numba.njit(cache=True, nogil=True, fastmath=_FLAGS)
def residual_update(r, ap, alpha, rr):  # pragma: no cover (compiled)
    """r[:, c] -= alpha[c] ap[:, c] in place; rr[c] = ‖r[:, c]‖² of the updated residual."""
    n, b = r.shape
    for c in range(b):
        rr[c] = 0.0
    for i in range(n):
        for c in range(b):
            v = r[i, c] - alpha[c] * ap[i, c]
            r[i, c] = v
            rr[c] += v * v


@numba.njit(cache=True, nogil=True, fastmath=_FLAGS)
def direction_update(p, r, beta):  # pragma: no cover (compiled)
    """p[:, c] = r[:, c] + beta[c] p[:, c] in place."""
    n, b = p.shape
    for i in range(n):
        for c in range(b):
            p[i, c] = r[i, c] + beta[c] * p[i, c]
