"""The symmetric form of a region's blocks and its most entangled modes.

With X_A = L Lᵀ (Cholesky), W = Lᵀ P_A L is symmetric with eigenvalues ν² (the squared
symplectic eigenvalues), and each eigenvector w gives the profile u = L w of a mode on the
region's sites: X_A P_A u = ν² u.  This transform is written here once.
"""

import numpy as np
import scipy.linalg
import scipy.linalg.blas

__all__ = ["entangled_modes", "symplectic_form"]


def symplectic_form(x, p):
    """Cholesky factor L of X_A and the symmetric W = Lᵀ P_A L (both blocks symmetrised).

    Parameters
    ----------
    x, p : ndarray, shape (n, n)
        The region blocks X_A (positive definite) and P_A.

    Returns
    -------
    chol : ndarray
        Lower-triangular L with X_A = L Lᵀ.
    w : ndarray
        W = Lᵀ P_A L, exactly symmetric; its eigenvalues are ν².

    Examples
    --------
    >>> import numpy as np
    >>> chol, w = symplectic_form(np.diag([4.0, 1.0]), np.diag([1.0, 9.0]))
    >>> np.diag(w).tolist()
    [4.0, 9.0]
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    p = np.atleast_2d(np.asarray(p, dtype=float))
    if x.shape != p.shape or x.shape[0] != x.shape[1]:
        raise ValueError(f"X_A {x.shape} and P_A {p.shape} must be square blocks of one shape")
    if x.shape[0] == 0:
        raise ValueError("the region is empty; a symplectic spectrum needs at least one site")
    try:
        chol = scipy.linalg.cholesky(0.5 * (x + x.T), lower=True)
    except np.linalg.LinAlgError:
        raise ValueError("X_A is not positive definite: these blocks are not the correlators of "
                         "a physical Gaussian state (check V and M)") from None
    # W = Lᵀ P_A L by two triangular products (half the flops of two general ones)
    w = scipy.linalg.blas.dtrmm(1.0, chol, 0.5 * (p + p.T), side=1, lower=1)
    w = scipy.linalg.blas.dtrmm(1.0, chol, w, side=0, lower=1, trans_a=1)
    return chol, 0.5 * (w + w.T)


def entangled_modes(x, p, *, count=2):
    """Symplectic eigenvalues ν and site profiles u of the ``count`` most entangled modes.

    Parameters
    ----------
    x, p : ndarray, shape (n, n)
        The region blocks X_A, P_A.
    count : int
        How many modes (largest ν first).

    Returns
    -------
    nu : ndarray, shape (count,)
    u : ndarray, shape (count, n)
        Unit-norm eigenvectors of X_A P_A (u = L w, see :func:`symplectic_form`).

    Examples
    --------
    >>> import numpy as np
    >>> nu, u = entangled_modes(np.diag([1.0, 2.0]), np.diag([1.0, 2.0]), count=1)
    >>> float(nu[0]), np.abs(u[0]).tolist()
    (2.0, [0.0, 1.0])
    """
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)) or count < 1:
        raise ValueError(f"count={count!r} must be a whole number >= 1")
    chol, w = symplectic_form(x, p)
    n = w.shape[0]
    count = min(int(count), n)
    # only the largest eigenpairs: a fraction of the full eigendecomposition's work
    nu2, vec = scipy.linalg.eigh(w, subset_by_index=[n - count, n - 1])
    top = np.argsort(nu2)[::-1]
    u = chol @ vec[:, top]
    u /= np.linalg.norm(u, axis=0)
    return np.sqrt(np.maximum(nu2[top], 0.0)), u.T
