"""Fused block kernels of the CG recurrence (one pass over memory per step, no temporaries).

The multishift CG of :mod:`._shifted` on a block of b right-hand sides is bound by memory
bandwidth: with numpy each step of the recurrence (the sparse product, the b inner products,
the residual and direction updates with per-column scalars) is a separate pass over n×b arrays,
plus a zero-filled output per product — about 16 passes per iteration.  These kernels fuse them
into three passes (product with its inner products; residual update with its norms; direction
update), each compiled by numba.  They perform the same floating-point operations as the numpy
recurrence up to the order of summation of the inner products, so the rounding analysis of the
residuals (recursively updated, bounded a posteriori) is unchanged.

Each kernel works on a list of ``rows`` only: the rows the Krylov vectors can reach so far
(:func:`hop_distance`).  A right-hand side supported on a set S has, after k products, its
residual and direction supported within k hops of S (the k-th Krylov space of a sparse matrix);
every other row of r, p and A p is exactly zero, so skipping it changes no number and no
rounding, and on a large lattice the early iterations touch a small ball around the region.
"""

import numba
import numpy as np

__all__ = ["compact_columns", "csr_block_product", "direction_update", "hop_distance",
           "merge_rows", "nonzero_rows", "residual_update", "rows_by_level"]

#: Hop distance of a row that no source reaches.
UNREACHED = np.iinfo(np.int32).max

#: Reassociation and fused multiply-add only (no assumptions on NaN or infinities): the
#: rounding of each sum stays within the usual n·ε model, and a NaN still reaches the caller.
_FLAGS = {"reassoc", "contract"}


@numba.njit(cache=True, nogil=True, fastmath=_FLAGS)
def csr_block_product(indptr, indices, data, p, out, pap, rows):  # pragma: no cover (compiled)
    """out = A p on ``rows`` for CSR A and a C-ordered block p (n, b); pap[c] = p[:, c]·out[:, c].

    p must vanish outside ``rows``, and so must A p (``rows`` holds every row within one hop of
    p's support); ``out`` is written on ``rows`` only.
    """
    b = p.shape[1]
    for c in range(b):
        pap[c] = 0.0
    for i in rows:
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
def residual_update(r, ap, alpha, rr, rows):  # pragma: no cover (compiled)
    """r[:, c] -= alpha[c] ap[:, c] on ``rows`` in place; rr[c] = ‖r[:, c]‖² of the result
    (r vanishes outside ``rows``; ap is read on ``rows`` only)."""
    b = r.shape[1]
    for c in range(b):
        rr[c] = 0.0
    for i in rows:
        for c in range(b):
            v = r[i, c] - alpha[c] * ap[i, c]
            r[i, c] = v
            rr[c] += v * v


@numba.njit(cache=True, nogil=True, fastmath=_FLAGS)
def direction_update(p, r, beta, rows):  # pragma: no cover (compiled)
    """p[:, c] = r[:, c] + beta[c] p[:, c] on ``rows`` in place (both vanish elsewhere)."""
    b = p.shape[1]
    for i in rows:
        for c in range(b):
            p[i, c] = r[i, c] + beta[c] * p[i, c]


@numba.njit(cache=True, nogil=True)
def hop_distance(indptr, indices, sources):  # pragma: no cover (compiled)
    """Hops from the nearest of ``sources`` to every row in the graph of the symmetric CSR
    pattern (breadth-first search); :data:`UNREACHED` where no source reaches."""
    n = indptr.size - 1
    dist = np.full(n, UNREACHED, dtype=np.int32)
    queue = np.empty(n, dtype=np.int64)
    tail = 0
    for s in sources:
        if dist[s] != 0:
            dist[s] = 0
            queue[tail] = s
            tail += 1
    head = 0
    while head < tail:
        i = queue[head]
        head += 1
        d = dist[i] + 1
        for k in range(indptr[i], indptr[i + 1]):
            j = indices[k]
            if dist[j] > d:
                dist[j] = d
                queue[tail] = j
                tail += 1
    return dist


@numba.njit(cache=True, nogil=True)
def nonzero_rows(a):  # pragma: no cover (compiled)
    """Indices of the rows of the 2-D array ``a`` with a nonzero entry (no n×b temporary)."""
    n, b = a.shape
    hit = np.zeros(n, dtype=np.bool_)
    for i in range(n):
        for c in range(b):
            if a[i, c] != 0.0:
                hit[i] = True
                break
    return np.flatnonzero(hit)


@numba.njit(cache=True, nogil=True)
def compact_columns(flat, n, b, kept, hops, level):  # pragma: no cover (compiled)
    """In place, the C-ordered (n, b) block held in ``flat[:n*b]`` becomes the (n, m) block of
    its columns ``kept`` (ascending, m of them) in ``flat[:n*m]``.

    The block must vanish on the rows with ``hops > level``, and so does the result.  A write
    at i*m + j never lands on an entry still to be read (those sit at i'*b + kept[j'] > i*m + j),
    so no second buffer is needed; an unreached row is written (zeros) only where the old
    layout held a reached row's entries, so pages no Krylov vector reached stay untouched.
    """
    m = kept.size
    for i in range(n):
        if hops[i] <= level:
            for j in range(m):
                flat[i * m + j] = flat[i * b + kept[j]]
        else:
            dirty = False
            for k in range((i * m) // b, (i * m + m - 1) // b + 1):
                if hops[k] <= level:
                    dirty = True
                    break
            if dirty:
                for j in range(m):
                    flat[i * m + j] = 0.0


@numba.njit(cache=True, nogil=True)
def rows_by_level(hops):  # pragma: no cover (compiled)
    """The reached rows grouped by hop level, ascending within each (a counting sort): level
    k's rows are ``order[start[k]:start[k + 1]]``, and the deepest level is ``start.size - 2``.
    Two passes over the n rows per solve, so that each step adds its new level in time
    proportional to the rows reached (:func:`merge_rows`) instead of scanning all n rows."""
    reach = 0
    for i in range(hops.size):
        if hops[i] != UNREACHED and hops[i] > reach:
            reach = hops[i]
    start = np.zeros(reach + 2, dtype=np.int64)
    for i in range(hops.size):
        if hops[i] <= reach:
            start[hops[i] + 1] += 1
    for k in range(reach + 1):
        start[k + 1] += start[k]
    order = np.empty(start[reach + 1], dtype=np.int64)
    fill = start[:reach + 1].copy()
    for i in range(hops.size):
        h = hops[i]
        if h <= reach:
            order[fill[h]] = i
            fill[h] += 1
    return order, start


@numba.njit(cache=True, nogil=True)
def merge_rows(current, new, out):  # pragma: no cover (compiled)
    """Write the union of the ascending, disjoint row lists ``current`` and ``new`` to ``out``
    in ascending order; return its length."""
    i = j = k = 0
    while i < current.size and j < new.size:
        if current[i] < new[j]:
            out[k] = current[i]
            i += 1
        else:
            out[k] = new[j]
            j += 1
        k += 1
    while i < current.size:
        out[k] = current[i]
        i += 1
        k += 1
    while j < new.size:
        out[k] = new[j]
        j += 1
        k += 1
    return k
