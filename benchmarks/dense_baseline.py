"""Plain-numpy dense baseline: eigh of V, correlator blocks, symplectic eigenvalues.

Deliberately independent of arealaw (only numpy / scipy.linalg), so the spectral backend is timed
against the textbook route: V of a Dirichlet box as a Kronecker sum of 1-D Laplacians,
V = U Ω² Uᵀ, X_A = ½[U Ω^{-1} Uᵀ]_AA, P_A = ½[U Ω Uᵀ]_AA, ν = sqrt(eig(X_A P_A)).
Run by hand: ``python -m benchmarks.dense_baseline 12``.
"""

import sys
import time

import numpy as np
import scipy.linalg

__all__ = ["centred_cube", "dense_entropy", "dirichlet_box_potential"]


def dirichlet_box_potential(side, d=3, mass=0.0):
    """V = m² + Σ_a (I ⊗ … ⊗ T ⊗ … ⊗ I) with T = tridiag(−1, 2, −1), dense, C order."""
    t = 2 * np.eye(side) - np.eye(side, k=1) - np.eye(side, k=-1)
    eye = np.eye(side)
    v = mass**2 * np.eye(side**d)
    for a in range(d):
        term = np.ones((1, 1))
        for b in range(d):
            term = np.kron(term, t if a == b else eye)
        v += term
    return v


def centred_cube(side, cube, d=3):
    """Flat C-order indices of the centred cube of ``cube`` sites per axis."""
    start = (side - cube) // 2
    axis = np.arange(start, start + cube)
    grids = np.meshgrid(*([axis] * d), indexing="ij")
    return np.ravel_multi_index([g.ravel() for g in grids], (side,) * d)


def dense_entropy(side, cube, d=3, mass=0.0):
    """Von Neumann entropy of the centred cube of a Dirichlet box, the plain dense way."""
    v = dirichlet_box_potential(side, d, mass)
    lam, u = scipy.linalg.eigh(v)
    omega = np.sqrt(lam)
    rows = centred_cube(side, cube, d)
    ua = u[rows]
    x = 0.5 * (ua / omega) @ ua.T
    p = 0.5 * (ua * omega) @ ua.T
    nu = np.sqrt(np.clip(np.linalg.eigvals(x @ p).real, 0.25, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (nu + 0.5) * np.log(nu + 0.5) - np.where(nu > 0.5, (nu - 0.5) * np.log(nu - 0.5), 0)
    return float(np.sum(s))


if __name__ == "__main__":
    side = int(sys.argv[1]) if len(sys.argv) > 1 else 12
    t0 = time.perf_counter()
    s = dense_entropy(side, side // 2)
    print(f"{side}^3 box, cube {side // 2}: S = {s:.12f} in {time.perf_counter() - t0:.2f} s")
