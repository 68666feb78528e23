"""Partial transposition of a Gaussian state and its logarithmic negativity.

For the reduced state of A ∪ B with blocks X_AB, P_AB, transposing B is time reversal on B:
its momenta change sign, P̃ = R P_AB R with R = diag(1_A, −1_B), while X_AB stays.  The partially
transposed matrix is positive iff every symplectic eigenvalue ν̃ of (X_AB, P̃) is ≥ ½, and the
logarithmic negativity is E_N = ln‖ρ^{T_B}‖₁ = Σ_k max(0, −ln 2ν̃_k) (Vidal & Werner 2002,
Phys. Rev. A 65, 032314, Sec. V; Audenaert, Eisert, Plenio & Werner 2002, Phys. Rev. A 66,
042327).

The ν̃² are the eigenvalues of the symmetric form W̃ = Lᵀ P̃ L (X_AB = L Lᵀ), computed as
τ = ν̃² − ¼ ∈ (−¼, ∞) exactly as for ordinary symplectic spectra, with the same per-mode bounds
|δτ| (residuals and, through Weyl's inequality, the block errors: R is orthogonal, so P̃ has the
norm and the error norm of P_AB).  Per mode E_N is f(τ) = max(0, −½ ln(1 + 4τ)): decreasing and
convex, so the largest change within |δτ| ≤ δ is f(τ − δ) − f(τ).  Unlike the entropy, f is
Lipschitz at the kink τ = 0 (slope 2), so the many modes with ν̃ ≈ ½ add at most 2δ each and
no δ·ln(1/δ) terms arise.
"""

from dataclasses import dataclass, field

import numpy as np

from ._symplectic import form_eigenvalues

__all__ = ["PartialTransposeSpectrum", "log_negativity", "log_negativity_error_bound",
           "partial_transpose_spectrum"]


@dataclass(frozen=True)
class PartialTransposeSpectrum:
    """Symplectic spectrum of a partially transposed Gaussian state, as τ = ν̃² − ¼ (ascending).

    Attributes
    ----------
    tau : ndarray
        ν̃² − ¼ per mode, ascending; τ < 0 marks the modes that make the state negative.
    tau_error : ndarray
        Bound on |τ_exact − τ| per mode.
    info : dict
        Diagnostics.
    """

    tau: np.ndarray
    tau_error: np.ndarray
    info: dict = field(default_factory=dict)

    @property
    def nu(self):
        """Symplectic eigenvalues ν̃ > 0 of the partial transpose."""
        return np.sqrt(0.25 + self.tau)


def partial_transpose_spectrum(x, p, flip, *, x_error=0.0, p_error=0.0, x_dominant=None,
                               p_dominant=None, x_entry=0.0, p_entry=0.0, info=None):
    """Spectrum of the partial transpose of a Gaussian state with blocks ``x``, ``p``.

    Parameters
    ----------
    x, p : ndarray (n, n)
        X_AB and P_AB of the sites of A ∪ B.
    flip : ndarray of bool (n,)
        True for the sites of B (the transposed part: their momenta change sign).
    x_error, p_error : float
        Bounds on the spectral-norm errors of ``x`` and ``p``.
    x_dominant, p_dominant : ndarray (n, n), optional
        Loewner-dominating error blocks of ``x`` and ``p`` (untransposed; P's is flipped here).
    x_entry, p_entry : float
        Bounds on every entry's error.  The error forms are those of
        :func:`~arealaw.spectrum._bounds.correlator_terms`.

    Returns
    -------
    PartialTransposeSpectrum

    Examples
    --------
    A two-mode squeezed state with r = 1 (X = ½ [[ch 2r, sh 2r], [sh 2r, ch 2r]], P the same
    with −sh 2r) has ν̃ = ½ e^{∓2r}, so E_N = 2r:

    >>> import numpy as np
    >>> from arealaw.spectrum import log_negativity, partial_transpose_spectrum
    >>> c, s = np.cosh(2.0), np.sinh(2.0)
    >>> x = 0.5 * np.array([[c, s], [s, c]])
    >>> p = 0.5 * np.array([[c, -s], [-s, c]])
    >>> pt = partial_transpose_spectrum(x, p, np.array([False, True]))
    >>> round(log_negativity(pt), 12)
    2.0
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    p = np.atleast_2d(np.asarray(p, dtype=float))
    flip = np.asarray(flip, dtype=bool)
    n = x.shape[0]
    if x.shape != p.shape or x.shape[0] != x.shape[1] or flip.shape != (n,):
        raise ValueError(f"X {x.shape}, P {p.shape} and flip {flip.shape} must be blocks of one "
                         "square shape (n, n) and a mask of length n")
    if n == 0:
        raise ValueError("A ∪ B is empty; a partial transpose needs at least one site")
    sign = np.where(flip, -1.0, 1.0)
    flip_both = sign[:, None] * sign[None, :]
    # −H ⪯ δP ⪯ H gives −RHR ⪯ R δP R ⪯ RHR: the dominating block flips with P
    tau, delta = form_eigenvalues(
        x, p * flip_both, x_error=x_error, p_error=p_error, x_dominant=x_dominant,
        p_dominant=None if p_dominant is None else np.asarray(p_dominant) * flip_both,
        x_entry=x_entry, p_entry=p_entry)
    return PartialTransposeSpectrum(tau=np.asarray(tau), tau_error=np.asarray(delta),
                                    info=dict(info or {}))


def _mode_log_negativity(tau):
    # −ln 2ν̃ = −½ ln(1 + 4τ); log1p keeps the modes near ν̃ = ½ accurate
    tau = np.asarray(tau, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(tau < 0, -0.5 * np.log1p(4.0 * np.minimum(tau, 0.0)), 0.0)


def log_negativity(spec):
    """E_N = Σ max(0, −ln 2ν̃) over the modes of a :class:`PartialTransposeSpectrum`."""
    return float(np.sum(_mode_log_negativity(spec.tau)))


def log_negativity_error_bound(spec):
    """Bound on |E_N(exact) − E_N(computed)| from the per-mode bounds on τ = ν̃² − ¼.

    Infinite if some mode's interval reaches ν̃ = 0 (the blocks are then too inaccurate to say
    anything).
    """
    lo = spec.tau - spec.tau_error
    if np.any(lo <= -0.25):
        return float("inf")
    return float(np.sum(_mode_log_negativity(lo) - _mode_log_negativity(spec.tau)))
