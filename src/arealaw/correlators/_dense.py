"""Dense reference correlators: exact eigendecomposition, for networks small enough to hold N×N."""

import math
import weakref
from typing import NamedTuple

import numpy as np
import scipy.linalg
import scipy.sparse

from .._errors import ZERO_MODE, UnsupportedMethodError
from .._costs import cost
from .._numerics import EPS, fits_in_memory, format_bytes, require_memory
from ._base import Assessment, Blocks, CorrelatorBackend
from ._polar import exact_gram_deviation, polar_corrected
from ._temperature import check_temperature, coth_factor

__all__ = ["DenseBackend", "backward_error", "dense_correlators", "dominant_blocks"]


class _DominantForm(NamedTuple):
    """What :func:`dominant_blocks` needs to form Loewner error blocks of any rows and columns."""

    ux: np.ndarray          # X̂'s error H_X = ux·diag(hx)·uxᵀ (+ the terms below)
    hx: np.ndarray
    up: np.ndarray          # P̂'s error H_P = up·diag(hp)·upᵀ
    hp: np.ndarray
    x_shift: float          # H written with U' instead of Q: a multiple of I
    p_shift: float
    delta_x: float          # relative basis deviations (polar correction, kinetic roots)
    delta_p: float
    x_norm: float           # ‖X̂‖, ‖P̂‖ bounds
    p_norm: float
    relative: float         # the kinetic roots' relative Loewner term, times X̂ and P̂
    x: np.ndarray           # X̂, P̂ themselves
    p: np.ndarray


def dense_memory_bytes(n):
    """Peak bytes of :func:`dense_correlators` for N sites (about six N×N float64 arrays)."""
    return 6.0 * 8.0 * float(n) ** 2


def dense_correlators(network, *, temperature=0.0):
    """Full X and P of the ground or Gibbs state by eigendecomposition (the reference; O(N³)).

    With K = M^{-1/2} V M^{-1/2} = U Ω² Uᵀ and c = coth(Ω/2T) (c = 1 at T = 0):
    X = ½ M^{-1/2} U c Ω^{-1} Uᵀ M^{-1/2},  P = ½ M^{1/2} U c Ω Uᵀ M^{1/2}.

    Parameters
    ----------
    network : OscillatorNetwork
    temperature : float
        T ≥ 0 of the Gibbs state exp(−H/T) (k_B = ħ = 1); 0 is the ground state.

    Returns
    -------
    x, p : ndarray, shape (N, N)
    info : dict
        ``omega_min``, ``omega_max`` and the error bounds ``x_error``, ``p_error`` (spectral norm).

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import OscillatorNetwork
    >>> from arealaw.correlators import dense_correlators
    >>> x, p, info = dense_correlators(OscillatorNetwork(np.array([[4.0]])))
    >>> float(x[0, 0]), float(p[0, 0])
    (0.25, 1.0)
    >>> x, p, info = dense_correlators(OscillatorNetwork(np.array([[4.0]])), temperature=1.0)
    >>> bool(abs(x[0, 0] - 0.25 / np.tanh(1.0)) < 1e-15)
    True
    """
    temperature = check_temperature(temperature)
    if network.is_infinite:
        raise UnsupportedMethodError("the dense method needs a finite network; an infinite "
                                     "lattice is served by method='spectral'")
    n = network.n_sites
    require_memory(dense_memory_bytes(n), f"the dense method on {n} sites",
                   "use method='auto' (spectral for uniform boxes, sparse otherwise)")
    v = network.potential.toarray()
    m_beta = 0.0
    relative = 0.0              # X̂, P̂ are exact for M' = Â^{-2} ≠ M: a relative Loewner term
    congruence_x = 0.0          # relative congruences of X̂, P̂ (P̂ = (B̂Â) P(V, M') (ÂB̂))
    congruence_p = 0.0
    root_ratio = 1.0            # ‖M^{-1/2}‖·‖M^{1/2}‖ (bounded)
    if network.kinetic is None:
        m_half = m_inv_half = None
        k = v
    else:
        m_half, m_inv_half, gamma_x, gamma_p, root_ratio = _kinetic_roots(
            network.kinetic.toarray())
        k = m_inv_half @ v @ m_inv_half
        k = 0.5 * (k + k.T)
        # X = ½ M^{-1} # V^{-1} and P = ½ M # V (matrix geometric means, monotone in each
        # argument, homogeneous): Â symmetric makes X̂ = Â X_K(ÂVÂ) Â the exact X of M' = Â^{-2},
        # and (1 − c)M ⪯ M' ⪯ (1 + c)M with c = (1 − γ_X)^{-2} − 1 moves X and P by at most
        # ((1 − c)^{-1/2} − 1) times themselves
        if temperature == 0:
            c = (1 - gamma_x) ** -2 - 1
            rho = (1 - c) ** -0.5 - 1
            relative = rho / (1 - rho)
            # B̂Â − I = (B̂ − B)Â + B(Â − A)
            congruence_p = gamma_p * (1 + gamma_x) + gamma_x
        else:
            # no geometric-mean form at T > 0: Â, B̂ act as congruences (γ_X, γ_P) on X and P,
            # and ÂVÂ − AVA, at most (2γ_X + γ_X²)/(1 − γ_X)²·‖K̂‖, joins the backward error
            congruence_x, congruence_p = gamma_x, gamma_p
            m_beta = (2 * gamma_x + gamma_x ** 2) / (1 - gamma_x) ** 2
    lam, u = scipy.linalg.eigh(k)
    scale = max(abs(lam[0]), abs(lam[-1]))
    if m_half is not None:
        m_beta = (m_beta + 2 * math.sqrt(n) * EPS) * scale   # model: rounding of forming Â V Â
    if lam[0] <= 64 * n * EPS * scale:
        raise ValueError(
            f"potential V is not positive definite (smallest eigenvalue of M^-1/2 V M^-1/2 is "
            f"{lam[0]:.3g}); {ZERO_MODE}")
    if network.kinetic is None and scipy.sparse.issparse(network.potential):
        del k, v   # the residual is formed with the sparse V
        k = None
    # U is replaced by U' within a proven δ of its orthogonal polar factor Q (the basis of the
    # backward-error lemma): X̂ = ½U'DU'ᵀ then differs from ½QDQᵀ by a δ-sized term (below),
    # where ½UDUᵀ differed by ‖UᵀU − I‖·‖D‖, hundreds of ε times ‖X‖ (seen: 7.9e-14 on a 6-site
    # network; 2.4e-13 on a 2000-site chain, where ‖X‖ = 318; δ there is 9e-15)
    basis, eta, delta, column = polar_corrected(u)
    # in the frame of X = Â X_K Â: Â U' = (I + ÂΔQᵀÂ^{-1}) Â Q, a relative deviation of at most
    # δ‖Â‖‖Â^{-1}‖; the congruences above compose with it
    delta_x = (1 + congruence_x) * (1 + delta * root_ratio) - 1
    delta_p = (1 + congruence_p) * (1 + delta * root_ratio) - 1
    if not delta < 0.5:
        raise ValueError(f"the eigenvectors of M^-1/2 V M^-1/2 lost orthogonality (‖UᵀU − I‖ up to "
                         f"{eta:.3g}); the dense method cannot certify this network")
    # A posteriori: each computed λ_i has an exact eigenvalue within its residual ‖K u_i − λ_i u_i‖
    # (plus the loss of orthogonality); X and P errors follow from 1/√λ and √λ mode by mode.
    res, res_round = _residual(network, k, u, lam)
    # A posteriori backward error (see :func:`backward_error`): the computed pairs are exact
    # for some K + E with ‖E‖ ≤ β (in the basis Q).
    budget = backward_error(res, u, res_round, scale, orthogonality=eta)
    resid = np.linalg.norm(res, axis=0) + res_round
    del res, u, k
    omega = np.sqrt(lam)
    coth = coth_factor(omega, temperature)
    # ω/c and ω·c are ω itself at T = 0 (c = 1.0 exactly): the ground state bit for bit
    x = 0.5 * (basis / (omega / coth)) @ basis.T
    p = 0.5 * (basis * (omega * coth)) @ basis.T
    dlam = resid + np.sqrt(n) * EPS * scale * (1 + column / EPS)
    if np.any(dlam >= lam / 2):
        raise ValueError(f"potential V is too ill-conditioned for the dense method (condition "
                         f"number {scale / lam[0]:.3g}); increase the mass")
    # coth(ω/2T)/ω decreases and ω·coth(ω/2T) increases with ω, so the ends of each
    # eigenvalue's interval bound its mode's error
    w_lo, w_hi = np.sqrt(lam - dlam), np.sqrt(lam + dlam)
    x_err = float(np.max(0.5 * (coth_factor(w_lo, temperature) / w_lo - coth / omega))) \
        + n * EPS * coth[0] / omega[0]
    p_err = float(np.max(0.5 * (w_hi * coth_factor(w_hi, temperature) - omega * coth))) \
        + n * EPS * omega[-1] * coth[-1]
    dominant = None
    # Then −β ⪯ E ⪯ β and, K ± β commuting with K and t^{∓1/2} being operator monotone,
    # ½QDQᵀ − X is dominated in Loewner order by
    # H = ½ Q diag((λ − β)^{-1/2} − λ^{-1/2}) Qᵀ (the P side by ½ Q diag(√λ − √(λ−β)) Qᵀ, the
    # wider side of each mode's interval since √ is concave): errors relative to the actual
    # matrices, mode by mode, instead of ‖X‖-sized ones.
    beta = budget["residual"] + budget["rounding"] + m_beta
    # X̂ = ½ U' D U'ᵀ is formed with U' = Q + Δ, ‖Δ‖ ≤ δ: U'DU'ᵀ − QDQᵀ = ΔDQᵀ + QDΔᵀ + ΔDΔᵀ
    # and ±(ΔDQᵀ + QDΔᵀ) ⪯ εQDQᵀ + ΔDΔᵀ/ε for any ε > 0, so
    # ±(X̂ − ½QDQᵀ) ⪯ ε·½QDQᵀ + (1 + 1/ε) δ² ‖½D‖ I; solving the lower side for ½QDQᵀ gives
    # H_polar = (ε X̂ + (1 + 1/ε) δ² ‖½D‖ I) / (1 − ε), relative to X̂ itself.  ε is chosen to
    # balance the two parts' effect on t (tr(ε X̂ P) against δ²‖½D‖ tr P / ε, with
    # tr(X̂P) ≈ n/4 and tr P ≈ n·mean P_ii); any ε in (0, 1) is rigorous.
    x_norm = 0.5 * float(np.max(coth / omega))
    p_norm = 0.5 * float(np.max(omega * coth))
    x_err += (2 * delta_x + delta_x * delta_x + relative) * x_norm
    p_err += (2 * delta_p + delta_p * delta_p + relative) * p_norm
    if beta < lam[0] / 2:
        # At T > 0, f(t) = coth(√t/2T)/√t = 2T Σ_n 1/(t + (2πnT)²) is operator monotone
        # decreasing and g(t) = √t coth(√t/2T) = 2T Σ_n t/(t + (2πnT)²) increasing (Matsubara
        # sums of such terms), so the argument holds with f, g in place of t^{∓1/2}.  f is
        # convex and g concave: the wider side of each mode's interval is f(λ−β) − f(λ) and
        # g(λ) − g(λ−β).
        w_lo = np.sqrt(lam - beta)
        g_lo = w_lo * coth_factor(w_lo, temperature)
        hx = 0.5 * (coth_factor(w_lo, temperature) / w_lo - coth / omega)
        hp = 0.5 * (omega * coth - g_lo)
        ux = up = basis
        # H itself is written with U' (and Â): U' h U'ᵀ − Q h Qᵀ ≤ (2δ + δ²)‖h‖ in norm
        x_shift = (2 * delta_x + delta_x * delta_x) * float(np.max(hx))
        p_shift = (2 * delta_p + delta_p * delta_p) * float(np.max(hp))
        mi2 = mh2 = 1.0
        if m_half is not None:
            # congruence keeps the Loewner order: H_X = M^{-1/2} (H + cI) M^{-1/2}, and
            # M^{-1} ⪯ ‖M^{-1/2}‖² I
            ux, up = m_inv_half @ basis, m_half @ basis
            mi2 = float(np.linalg.norm(m_inv_half, 2)) ** 2
            mh2 = float(np.linalg.norm(m_half, 2)) ** 2
        dominant = dict(ux=ux, hx=hx, up=up, hp=hp, x_shift=x_shift * mi2,
                        p_shift=p_shift * mh2, delta_x=delta_x, delta_p=delta_p,
                        x_norm=x_norm * mi2, p_norm=p_norm * mh2, relative=relative)
    if m_half is not None:
        x = m_inv_half @ x @ m_inv_half
        p = m_half @ p @ m_half
        x_err *= np.linalg.norm(m_inv_half, 2) ** 2
        p_err *= np.linalg.norm(m_half, 2) ** 2
    x = 0.5 * (x + x.T)
    p = 0.5 * (p + p.T)
    if dominant is not None:
        dominant = _DominantForm(**dominant, x=x, p=p)
    return x, p, {"omega_min": float(omega[0]), "omega_max": float(omega[-1]),
                  "x_error": float(x_err), "p_error": float(p_err), "temperature": temperature,
                  "backward_error": beta, "backward_error_budget": dict(budget, kinetic=m_beta,
                                                               basis_deviation=delta),
                  "dominant": dominant}


def _kinetic_roots(m):
    """M^{1/2}, M^{-1/2} from a polar-corrected eigendecomposition, with proven-or-modelled bounds
    γ_P, γ_X on their relative deviations (B̂ = (I + Γ')M^{1/2}, Â = (I + Γ)M^{-1/2}) and on
    ‖M^{-1/2}‖‖M^{1/2}‖.

    The computed pairs are exact for M + E_M, ‖E_M‖ ≤ β_M (:func:`backward_error`, residual
    rounding as the dense model 2√N·ε·‖M‖ per column), in the polar factor Q_W of W; the roots
    of M + E_M differ from those of M by at most β_M/(√a√b(√a + √b)) (t^{-1/2}) and
    β_M/(√a + √b) (t^{1/2}), a = μ_min − β_M, b = μ_min (integral representations of both
    roots); forming them with W' instead of Q_W adds (2δ + δ²)‖root‖ and the products' rounding
    the model √N·ε·‖root‖.
    """
    n = m.shape[0]
    mu, w = scipy.linalg.eigh(m)
    if mu[0] <= 0:
        raise ValueError(f"kinetic M is not positive definite (smallest eigenvalue {mu[0]:.3g})")
    basis, eta, delta, _ = polar_corrected(w)
    res = m @ w - w * mu
    budget = backward_error(res, w, np.full(n, 2 * math.sqrt(n) * EPS * float(mu[-1])),
                            float(mu[-1]), orthogonality=eta)
    beta = budget["residual"] + budget["rounding"]
    if not (delta < 0.5 and beta < mu[0] / 2):
        raise ValueError(f"kinetic M is too ill-conditioned for the dense method (condition "
                         f"number {mu[-1] / mu[0]:.3g})")
    a, b = mu[0] - beta, mu[0]
    form = 2 * delta + delta * delta + math.sqrt(n) * EPS
    dev_inv = beta / (math.sqrt(a * b) * (math.sqrt(a) + math.sqrt(b))) + form / math.sqrt(a)
    dev_half = beta / (math.sqrt(a) + math.sqrt(b)) + form * math.sqrt(mu[-1] + beta)
    gamma_x = dev_inv * math.sqrt(mu[-1] + beta)       # ‖Â − A‖·‖A^{-1}‖
    gamma_p = dev_half / math.sqrt(a)                  # ‖B̂ − B‖·‖B^{-1}‖
    m_half = (basis * np.sqrt(mu)) @ basis.T
    m_inv_half = (basis / np.sqrt(mu)) @ basis.T
    # symmetric Â makes X̂ the exact X of M' = Â^{-2} (the symmetrisation is within the model)
    m_half = 0.5 * (m_half + m_half.T)
    m_inv_half = 0.5 * (m_inv_half + m_inv_half.T)
    return m_half, m_inv_half, gamma_x, gamma_p, math.sqrt((mu[-1] + beta) / a)


def _residual(network, k, u, lam):
    """R = K U − U Λ and a bound on the rounding of each of its columns.

    Without a kinetic matrix K = V is sparse: R costs nnz(V)·N and each entry's rounding is at
    most γ_{w+1}·(|V||u_j| + |λ_j||u_j|)_i (w the most nonzeros in a row; Higham 2002, §3.5), so
    a column's at most γ_{w+1}(‖|V|‖∞ + |λ_j|)·‖u_j‖ (|V| symmetric: ‖|V|‖₂ ≤ its row sums), a
    proof.  A dense K (general M) gets the √N·ε model 2√N·ε·‖K‖ per column instead.
    """
    n = u.shape[0]
    if network.kinetic is None and scipy.sparse.issparse(network.potential):
        v = network.potential.tocsr()
        w = int(np.diff(v.indptr).max()) if n else 0
        res = v @ u - u * lam
        gamma = (w + 1) * EPS / (1 - (w + 1) * EPS)
        col_norms = np.linalg.norm(u, axis=0)
        row_abs = float(abs(v).sum(axis=1).max())
        return res, gamma * (row_abs + np.abs(lam)) * col_norms
    res = k @ u - u * lam
    scale = max(abs(lam[0]), abs(lam[-1]))
    return res, np.full(n, 2 * math.sqrt(n) * EPS * scale)


def backward_error(res, u, res_round, scale, *, orthogonality=None):
    """Bound β on ‖E‖₂ such that the computed pairs (Λ, U) are exact for K + E, with its budget.

    Lemma (proved here).  Let G = UᵀU = S² with ‖G − I‖₂ ≤ η < 1, Q = U S⁻¹ (orthogonal) and
    R = K U − U Λ.  Then K̃ = Q Λ Qᵀ = K + E with ‖E‖₂ ≤ ‖R‖₂·c(η),
    c(η) = √(1+η)/(1−η) + √(1+η)·(1/√(1−η) − 1)/√(1−η)  (= 1 + O(η)).
    Proof: UᵀKU is symmetric, so A := GΛ − ΛG = RᵀU − UᵀR; with C := SΛ − ΛS (antisymmetric)
    A = SC + CS, hence C = ∫₀^∞ e^{−tS} A e^{−tS} dt and ‖C‖ ≤ ‖A‖/(2σ_min(S)) ≤ ‖U‖‖R‖/σ_min.
    QᵀEQ = Λ − QᵀKQ = −C S⁻¹ − S⁻¹UᵀR S⁻¹ is symmetric, so it equals its symmetric part
    −½(CΦ − ΦC) − S⁻¹ sym(UᵀR) S⁻¹ with Φ = S⁻¹ − I; the norms give c(η).  The loss of
    orthogonality therefore enters only through c(η), not as ‖K‖·η.

    ‖R‖₂ is bounded rigorously from the computed residual R̂: the smallest of ‖R̂‖_F,
    √(‖R̂‖₁‖R̂‖∞), ‖R̂ᵀR̂‖_F^{1/2} and ‖(R̂ᵀR̂)²‖_F^{1/4} (λ_max(RᵀR)^k ≤ ‖(RᵀR)^k‖_F; the rounding
    of forming R̂ᵀR̂ is at most γ_N·‖R̂‖_F² in Frobenius norm, by Cauchy–Schwarz on each entry, and
    that of squaring it γ_N·‖R̂ᵀR̂‖_F²), plus the residual's own rounding.  η
    (``orthogonality``) is a proven bound: by default from the error-free Gram matrix of
    :func:`~arealaw.correlators._polar.exact_gram_deviation`; only c(η) ≈ 1 needs it.

    Models (not worst-case proofs; Higham & Mary 2019, SIAM J. Sci. Comput. 41(5), A2815, show
    that independent roundings grow like √N·ε with high probability): the residual's rounding
    as a matrix is taken as twice its largest column bound (iid-noise matrices have
    ‖·‖₂ ≈ 2 × column norm; the column bounds themselves are proofs for sparse K); the rounding
    of forming ½UDUᵀ is taken as an equivalent ‖E‖ of √N·ε·‖K‖.  The difference between the
    basis X̂ is formed with and Q is not a model: :func:`dense_correlators` forms X̂ with the
    polar-corrected U' (:func:`~arealaw.correlators._polar.polar_corrected`) and adds a Loewner
    term for ‖U' − Q‖ ≤ δ.
    """
    n = u.shape[0]
    gamma = n * EPS / (1 - n * EPS)
    fro = float(np.linalg.norm(res))
    gram = res.T @ res
    gram_fro = float(np.linalg.norm(gram))
    by_gram = math.sqrt(gram_fro + gamma * fro ** 2)
    # one squaring more: λ_max(G) ≤ ‖G²‖_F^{1/2} for the symmetrised G, whose distance to RᵀR
    # is at most γ_N‖R̂‖_F² + ε‖G‖_F; fl(G²) is off by at most γ_N‖G‖_F² in Frobenius norm
    gram = 0.5 * (gram + gram.T)
    square = float(np.linalg.norm(gram @ gram))
    del gram
    by_square = math.sqrt(math.sqrt(square + gamma * gram_fro ** 2) * (1 + 2 * n * EPS)
                          + gamma * fro ** 2 + EPS * gram_fro)
    by_sums = math.sqrt(float(np.abs(res).sum(axis=0).max()) * float(np.abs(res).sum(axis=1).max()))
    r_norm = min(fro, by_sums, by_gram, by_square)
    eta = orthogonality
    if eta is None:
        psi, e_g = exact_gram_deviation(u)
        eta = float(np.linalg.norm(psi)) * (1 + 2 * n * EPS) + e_g
        del psi
    if eta >= 0.5:
        raise ValueError(f"the eigenvectors of M^-1/2 V M^-1/2 lost orthogonality (‖UᵀU − I‖ up to "
                         f"{eta:.3g}); the dense method cannot certify this network")
    c = (math.sqrt(1 + eta) / (1 - eta)
         + math.sqrt(1 + eta) * (1 / math.sqrt(1 - eta) - 1) / math.sqrt(1 - eta))
    rounding_res = 2.0 * float(np.max(res_round))
    return {"residual": (r_norm + rounding_res) * c, "residual_norm": r_norm,
            "residual_rounding": rounding_res, "orthogonality": eta,
            "rounding": float(math.sqrt(n) * EPS * scale)}


def dominant_blocks(info, rows, cols=None):
    """Loewner-dominating error blocks (H_X, H_P)[rows, cols] of :func:`dense_correlators`.

    (None, None) where the backend gives none.
    """
    if info.get("dominant") is None:
        return None, None
    rows = np.asarray(rows)
    cols = rows if cols is None else np.asarray(cols)
    d = info["dominant"]
    x, p = d.x, d.p
    identity = (rows[:, None] == cols[None, :]).astype(float)  # I[rows, cols]
    hx_block = (d.ux[rows] * d.hx) @ d.ux[cols].T + d.x_shift * identity
    hp_block = (d.up[rows] * d.hp) @ d.up[cols].T + d.p_shift * identity
    if d.relative > 0:
        # the kinetic matrix's relative term, ρ/(1 − ρ) times X̂ and P̂
        hx_block += d.relative * x[np.ix_(rows, cols)]
        hp_block += d.relative * p[np.ix_(rows, cols)]
    # the basis term of :func:`dense_correlators`, with ε balanced on these rows
    diag_x, diag_p = np.diag(x)[rows], np.diag(p)[rows]
    for block, own, other_diag, norm, delta in ((hx_block, x, diag_p, d.x_norm, d.delta_x),
                                                (hp_block, p, diag_x, d.p_norm, d.delta_p)):
        if delta > 0:
            eps_ = min(0.5, delta * math.sqrt(4.0 * norm * max(float(np.mean(other_diag)), 0.0)))
            if eps_ > 0:
                block += (eps_ * own[np.ix_(rows, cols)]
                          + (1 + 1 / eps_) * delta * delta * norm * identity) / (1 - eps_)
    return hx_block, hp_block


class DenseBackend(CorrelatorBackend):
    """Exact eigendecomposition of the whole network (the reference for every fast backend)."""

    name = "dense"
    #: Correlators exact to rounding (``method='auto'`` prefers exact methods).
    exact = True

    def __init__(self):
        self._cache = (lambda: None, None, None)  # (weakref to the network, T, correlators)

    def assess(self, network, n_rows, *, tol, temperature=0.0):
        if network.is_infinite:
            return Assessment(False, "the dense method needs a finite network")
        n = network.n_sites
        need = dense_memory_bytes(n)
        if not fits_in_memory(need):
            return Assessment(False, f"needs {format_bytes(need)} for N = {n}", need)
        return Assessment(True, f"exact eigendecomposition of all {n} sites", need,
                          seconds=cost("dense.correlators") * float(n) ** 3)

    def _full(self, network, temperature):
        ref, temp, result = self._cache
        if ref() is not network or temp != temperature:
            result = dense_correlators(network, temperature=temperature)
            self._cache = (weakref.ref(network), temperature, result)
        return result

    def blocks(self, network, rows, cols=None, *, tol=None, temperature=0.0):
        x, p, info = self._full(network, check_temperature(temperature))
        rows = np.asarray(rows)
        cols = rows if cols is None else np.asarray(cols)
        hx, hp = dominant_blocks(info, rows, cols)
        return Blocks(x[np.ix_(rows, cols)], p[np.ix_(rows, cols)], info["x_error"],
                      info["p_error"], {"omega_min": info["omega_min"],
                                        "omega_max": info["omega_max"],
                                        "backward_error": info["backward_error"]},
                      x_dominant=hx, p_dominant=hp)
