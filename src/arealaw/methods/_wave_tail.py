"""Proven two-sided bounds of the partial-wave entropies S_l at large l, and of the l-tail.

The chain of angular momentum l (:func:`~arealaw.network.radial_chain`) is tridiagonal,
V = tridiag(−c_j, d_j, −c_j) with c_j > 0 and d_j = k_j + λ_l w_j + m², w_j = 1/j², λ_l = l(l+1)
in 3-D and l² in 2-D (k_j from the radial derivative); M = I.  The ball is A = sites 1 … n,
B = n+1 … N, and only the bond β = c_n crosses the cut.  Everything below is exact algebra
plus the rounding margins stated at the end.

1. The trace deficit.  With C = V^{1/2}, Y = V^{-1/2}, X = Y/2, P = C/2 and CY = I,
   X_A P_A − ¼ = −¼ Y_AB C_BA =: M_l, whose eigenvalues are the t_i = ν_i² − ¼ ≥ 0 of the ball
   (X_A − ¼P_A^{-1} = ½ Y_AB Y_BB^{-1} Y_BA ⪰ 0 by the Schur complement, so M_l is similar to a
   positive semi-definite matrix).  Write R(μ) = (V + μ)^{-1}.  From
   Y = (1/π)∫₀^∞ μ^{-1/2} R(μ) dμ, C = (1/π)∫₀^∞ μ^{-1/2}(I − μR(μ)) dμ and the block inverse
   R_AB = β a_μ b_μᵀ with a_μ = R(μ)_{A,n} and b_μ = (V_BB + μ)^{-1} e_{n+1},

       T_l = tr M_l = β²/(4π²) ∫∫ μ^{1/2} ν^{-1/2} (a_μ·a_ν)(b_μ·b_ν) dμ dν.

   V + μ is a Stieltjes matrix (positive definite, off-diagonals ≤ 0), so R(μ) ≥ 0 entrywise and
   every factor above is ≥ 0.

2. Lower bound.  (a_μ)_n = R(μ)_nn ≥ 1/(d_n + μ) (the inverse's diagonal dominates the inverse
   diagonal for SPD matrices), likewise (b_μ)_{n+1} ≥ 1/(d_{n+1} + μ); keeping only these
   components and using ∫ μ^{1/2}/((p+μ)(q+μ)) = π/(√p+√q), ∫ μ^{-1/2}/((p+μ)(q+μ)) =
   π/(√(pq)(√p+√q)),

       T_l ≥ T_lo = β² / (4 √(pq) (√p + √q)²)   with p = d_n, q = d_{n+1}.

   The same componentwise bound on the four-fold integral gives tr(M_l²) ≥ T_lo².

3. Upper bound (a supersolution).  If z > 0 and (V + μ)z ≥ e_n componentwise, then
   R(μ)e_n ≤ z (R ≥ 0).  Take the ratios of the μ = 0 Green function of a chain with slightly
   smaller diagonal d' = (1 − 10⁻¹²) d(l₀), l₀ ≤ l: σ_j = c_j/(d'_j − c_{j−1}σ_{j−1}) inward
   (z_j = σ_j z_{j+1}, j < n) and ρ_j = c_j/(d'_{j+1} − c_{j+1}ρ_{j+1}) outward (z_{j+1} = ρ_j z_j,
   j ≥ n; the denominators are pivots of positive-definite blocks).  Every row j ≠ n then
   holds with equality for d', hence with ≥ for d(l) ≥ d' and any μ ≥ 0 (d grows with l), and
   row n fixes z_n = 1/(p + μ), p = d_n(l) − c_{n−1}σ_{n−1} − c_n ρ_n.  So
   ‖a_μ‖ ≤ κ_A/(p + μ) with κ_A² = Σ_{j≤n} Π_{i=j}^{n−1} σ_i², and in the same way
   ‖b_μ‖ ≤ κ_B/(q + μ) with q = d_{n+1}(l) − c_{n+1}ρ_{n+1}, κ_B² = Σ_{j>n} Π_{i=n+1}^{j−1} ρ_i².
   Cauchy–Schwarz on both inner products and the two integrals of (2):

       T_l ≤ T_up = β² κ_A² κ_B² / (4 √(pq) (√p + √q)²).

   The ratios are the exact Green function's, so T_up/T_l − 1 = O(l⁻⁴) (measured in the tests).

4. Entropy of a sector.  Every per-mode entropy f (von Neumann or Rényi) is increasing and
   concave in t with f(0) = 0 (:func:`~arealaw.spectrum._bounds.concavity_note`), hence
   subadditive: S_l = Σ f(t_i) ≥ f(T_l) ≥ f(T_lo).  Above: Σ t_i² ≤ t_1 Σ t_i gives
   t_1 ≥ tr(M_l²)/T_l ≥ τ := T_lo²/T_up, so the other m − 1 modes (m = min(n, N − n), the rank of
   Y_AB) hold at most R = T_up − τ; by Jensen and f(t_1) ≤ f(T_up),

       f(T_lo) ≤ S_l ≤ U_l := f(T_up) + (m − 1) f(R/(m − 1))     (U_l = f(T_up) when m = 1).

5. The l-tail Σ_{l>L} g_l S_l (g_l = 2l + 1 in 3-D; 2 in 2-D) lies between Σ g_l f(T_lo) and
   Σ g_l U_l.  These are summed term by term up to l = L₁ (the ratios of (3) recomputed at
   every l up to 4096, then on a geometric grid, each used for the l above it).  Beyond L₁ only
   the upper side is kept, in closed form: p ≥ θ_p l², q ≥ θ_q l² (θ from l = L₁) give
   T_up ≤ K/l⁴, and with t = K/(m l⁴) ≤ 1/e and f ≤ φ, summed against the integral of the
   decreasing summand,
   * von Neumann (and every Rényi order α > 1, since S_α ≤ S_1 per mode):
     φ(t) = t(1 + t − ln t)  [ε = ν − ½ ≤ t, (1+ε)ln(1+ε) ≤ ε + ε², −ε ln ε ≤ −t ln t];
   * ½ < α < 1 in 3-D (¼ < α < 1 in 2-D): φ(t) = t^α/((1 − α)(1 − t^α))
     [Σp^α = (1−λ)^α/(1−λ^α), λ = ε/(1+ε) ≤ t];
   * smaller α: S_α,l ≥ f_α(T_lo) ~ c·l^{−4α} makes Σ g_l S_α,l diverge, and such orders are
     refused.

Rounding: the 10⁻¹² shave of d' exceeds the few-ulp rounding of each recursion step, T_up is
raised and T_lo lowered by 10⁻¹³ relative (more than the rounding of their formulas), and the
sums of positive terms are widened by 10⁻¹⁰ relative (numpy's pairwise summation errs far less).
"""

import math

import numpy as np

from ..network._radial import radial_chain
from ..spectrum._measures import mode_entropy, normalize_order

__all__ = ["WaveTail", "sector_bounds"]

#: Relative shave of the diagonal in the supersolution ratios (covers rounding of the recursion).
_SHAVE = 1e-12
#: Relative widening of T_up / T_lo (rounding of their closed forms).
_T_MARGIN = 1e-13
#: Relative widening of sums of positive terms.
_SUM_MARGIN = 1e-10
#: Ratios are recomputed at every l up to here, then on a geometric grid.
_EVERY_L = 4096
_GRID_RATIO = 1.01


def _chain_parts(n_radial, dim, mass):
    v0 = radial_chain(n_radial, 0, dim=dim, mass=mass)
    j = np.arange(1, n_radial + 1, dtype=float)
    return v0.diagonal().astype(float), -v0.diagonal(1).astype(float), 1.0 / j**2


def _lam(ls, dim):
    ls = np.asarray(ls, dtype=float)
    return ls * (ls + 1.0) if dim == 3 else ls * ls


def _ratio_constants(d0, c, w, s, lam):
    """Per l₀ (array lam = λ(l₀)): e_A, e_B, κ_A², κ_B² of the supersolution (docstring, 3)."""
    nr = d0.size
    lam = np.asarray(lam, dtype=float)
    dd = (d0[:, None] + w[:, None] * lam[None, :]) * (1.0 - _SHAVE)
    sig = np.zeros((max(s, 1), lam.size))
    prev = np.zeros(lam.size)
    for j in range(s):
        sig[j] = c[j] / (dd[j] - (c[j - 1] * prev if j > 0 else 0.0))
        prev = sig[j]
    rho = np.zeros((nr, lam.size))
    nxt = np.zeros(lam.size)
    for j in range(nr - 2, s - 1, -1):
        rho[j] = c[j] / (dd[j + 1] - (c[j + 1] * nxt if j + 1 < nr - 1 else 0.0))
        nxt = rho[j]
    e_a = c[s] * rho[s] + (c[s - 1] * sig[s - 1] if s > 0 else 0.0)
    e_b = c[s + 1] * rho[s + 1] if s + 1 < nr - 1 else np.zeros(lam.size)
    ka = np.ones(lam.size)
    prod = np.ones(lam.size)
    for j in range(s - 1, -1, -1):
        prod = prod * sig[j]
        ka += prod**2
    kb = np.ones(lam.size)
    prod = np.ones(lam.size)
    for j in range(s + 1, nr - 1):
        prod = prod * rho[j]
        kb += prod**2
    return e_a, e_b, ka, kb


def _two_site(beta, p, q):
    sp, sq = np.sqrt(p), np.sqrt(q)
    return beta**2 / (4.0 * sp * sq * (sp + sq) ** 2)


def _sector_modes(t_lo, t_up, m):
    """(t_lo, τ, R/(m−1)) per l, the modes of the lower and upper sector bounds (docstring, 4)."""
    if m == 1:
        return t_lo, t_up, np.zeros_like(t_up)
    # R = T_up − T_lo²/T_up without cancellation; T_up ≥ T_lo holds with the margins
    r = np.maximum((t_up - t_lo) * (t_up + t_lo) / t_up, 0.0)
    return t_lo, t_up, r / (m - 1)


def sector_bounds(n_radial, n, ls, *, dim=3, mass=0.0, order=1.0):
    """Proven bounds lo ≤ S_l ≤ up on the entropy of each partial wave ``ls`` of the n-shell ball.

    Returns
    -------
    lo, up : ndarray
        Per l (the ratios of the upper bound computed at that l itself).

    Examples
    --------
    >>> from arealaw.methods._wave_tail import sector_bounds
    >>> lo, up = sector_bounds(40, 5, [100, 400])
    >>> bool((lo <= up).all() and up[1] < up[0] < 1e-3)
    True
    """
    ls = np.asarray(ls, dtype=float)
    t_lo, t_up, m = _trace_bounds(n_radial, n, ls, ls, dim, mass)
    f = lambda t: mode_entropy(t, order)  # noqa: E731
    a, b, r = _sector_modes(t_lo, t_up, m)
    return f(a), f(b) + (m - 1) * f(r)


def _trace_bounds(n_radial, n, ls, l0s, dim, mass):
    """T_lo(l), T_up(l) with the ratios of l0s (l0 ≤ l) and the mode count m."""
    d0, c, w = _chain_parts(n_radial, dim, mass)
    s = n - 1
    uniq, inv = np.unique(np.asarray(l0s, dtype=float), return_inverse=True)
    e_a, e_b, ka, kb = (x[inv] for x in _ratio_constants(d0, c, w, s, _lam(uniq, dim)))
    lam = _lam(ls, dim)
    beta = c[s]
    p = d0[s] + w[s] * lam - e_a
    q = d0[s + 1] + w[s + 1] * lam - e_b
    t_up = _two_site(beta, p, q) * ka * kb * (1.0 + _T_MARGIN)
    t_lo = _two_site(beta, d0[s] + w[s] * lam, d0[s + 1] + w[s + 1] * lam) * (1.0 - _T_MARGIN)
    return t_lo, t_up, min(n, n_radial - n)


def degeneracy(l, dim):
    """g_d(l): 2l + 1 in 3-D; 1 for l = 0 and 2 otherwise in 2-D (l may be non-integer)."""
    l = np.asarray(l, dtype=float)
    if dim == 3:
        return 2 * l + 1
    return np.where(l == 0, 1.0, 2.0)


def divergent_below(dim):
    """Rényi orders α at or below this make the l-sum of a ball diverge (docstring, 5)."""
    return 0.5 if dim == 3 else 0.25


class WaveTail:
    """Bounds of Σ_{l>L} g_l S_l for every cut-off L (docstring, 5), built once per ball.

    Parameters
    ----------
    n_radial, n, dim, mass
        The radial lattice and the ball of n shells.
    l_end : int
        L₁: terms are summed one by one up to here, the rest in closed form.
    """

    def __init__(self, n_radial, n, *, dim, mass, l_end=2**17):
        self.n_radial, self.n, self.dim, self.mass = n_radial, n, dim, mass
        self.l_end = int(l_end)
        ls = np.arange(1, self.l_end + 1, dtype=float)
        grid = np.unique(np.concatenate([
            np.arange(1, _EVERY_L + 1),
            np.floor(np.geomspace(_EVERY_L, self.l_end,
                                  int(math.log(self.l_end / _EVERY_L) / math.log(_GRID_RATIO))
                                  + 2))])) if self.l_end > _EVERY_L else ls
        l0 = grid[np.searchsorted(grid, ls, side="right") - 1]
        self.ls = ls
        self.t_lo, self.t_up, self.m = _trace_bounds(n_radial, n, ls, l0, dim, mass)
        self.g = degeneracy(ls, dim)
        # closed form beyond l_end: p ≥ θ_p l², q ≥ θ_q l² with the last ratios
        d0, c, w = _chain_parts(n_radial, dim, mass)
        s = n - 1
        e_a, e_b, ka, kb = (float(x[0]) for x in
                            _ratio_constants(d0, c, w, s, _lam([l0[-1]], dim)))
        lam1 = float(_lam([self.l_end], dim)[0])
        p1 = d0[s] + w[s] * lam1 - e_a
        q1 = d0[s + 1] + w[s + 1] * lam1 - e_b
        th_p, th_q = min(w[s], p1 / lam1), min(w[s + 1], q1 / lam1)
        self._k_far = float(_two_site(c[s], th_p, th_q) * ka * kb * (1.0 + _T_MARGIN))
        self._cache = {}

    def _arrays(self, order):
        key = normalize_order(order)
        if key not in self._cache:
            f = lambda t: mode_entropy(t, key)  # noqa: E731
            a, b, r = _sector_modes(self.t_lo, self.t_up, self.m)
            lo = self.g * f(a)
            up = self.g * (f(b) + (self.m - 1) * f(r))
            # suffix sums: index L holds Σ_{l > L}
            self._cache[key] = (np.concatenate([np.cumsum(lo[::-1])[::-1], [0.0]]),
                                np.concatenate([np.cumsum(up[::-1])[::-1], [0.0]]))
        return self._cache[key]

    def far_upper(self, order=1.0):
        """Closed-form bound on Σ_{l > l_end} g_l S_l (docstring, 5); raises for divergent α."""
        alpha = normalize_order(order)
        floor = divergent_below(self.dim)
        if alpha <= floor:
            raise ValueError(
                f"Rényi order {alpha:g}: on the radial lattice in d = {self.dim} the sum over "
                f"angular momenta diverges for orders <= {floor:g} (sector terms decay like "
                f"l^({self.dim - 2}-4*order)); use an order above {floor:g}")
        m, big = self.m, float(self.l_end)
        cc = self._k_far / m
        t1 = cc / big**4
        if t1 > 1.0 / math.e:
            return math.inf
        if alpha >= 1.0:
            lc = 1.0 - math.log(cc)
            if self.dim == 3:
                val = (cc * lc / (2 * big**2) + cc * (2 * math.log(big) + 1) / big**2
                       + cc**2 / (6 * big**6)) * (2.0 + 1.0 / big)
            else:
                val = 2.0 * (cc * lc / (3 * big**3) + 4 * cc * (3 * math.log(big) + 1)
                             / (9 * big**3) + cc**2 / (7 * big**7))
        else:
            pre = cc**alpha / ((1.0 - alpha) * (1.0 - t1**alpha))
            if self.dim == 3:
                val = (2.0 + 1.0 / big) * pre * big ** (2 - 4 * alpha) / (4 * alpha - 2)
            else:
                val = 2.0 * pre * big ** (1 - 4 * alpha) / (4 * alpha - 1)
        return m * val * (1.0 + _SUM_MARGIN)

    def bounds(self, cutoff, order=1.0):
        """(lower, upper) of Σ_{l > cutoff} g_l S_l for the given order."""
        lo, up = self._arrays(order)
        k = min(int(cutoff), self.l_end)
        return (float(lo[k]) * (1 - _SUM_MARGIN),
                float(up[k]) * (1 + _SUM_MARGIN) + self.far_upper(order))

    def half_gaps(self):
        """½(upper − lower) of the von Neumann tail for every cut-off L = 0 … l_end."""
        lo, up = self._arrays(1.0)
        return 0.5 * (up - lo) + 0.5 * self.far_upper(1.0)

    def cutoff(self, target, *, start=0, limit=None):
        """Smallest L ≥ start with ½(upper − lower) of the von Neumann tail ≤ target."""
        half = self.half_gaps()
        limit = self.l_end // 16 if limit is None else min(limit, self.l_end // 16)
        ok = np.nonzero(half[start:limit + 1] <= target)[0]
        return int(start + ok[0]) if ok.size else int(limit)

    def total_lower(self):
        """Σ_{l ≥ 1} g_l f(T_lo): a lower bound on the ball's entropy minus its l = 0 sector."""
        return float(self._arrays(1.0)[0][0])

    def midpoint_modes(self, cutoff, *, exact_span=16, ratio=1.001):
        """Modes (t, weight) whose weighted f-sum approximates ½(lower + upper) of the tail.

        One set of three modes per l up to exact_span·L, then per geometric bin (weights summed,
        g-weighted mean modes), and one mode carrying half the closed-form far bound.  Any
        mismatch is covered: the bound is max(E − lower, upper − E) for the represented E.
        """
        cutoff = int(cutoff)
        lo_end = min(max(exact_span * max(cutoff, 1), cutoff + 1), self.l_end)
        idx = np.arange(cutoff, lo_end)             # l = idx + 1
        edges = np.unique(np.concatenate([
            [lo_end], np.floor(np.geomspace(lo_end, self.l_end,
                                            int(math.log(max(self.l_end / lo_end, 1.0000001))
                                                / math.log(ratio)) + 2)).astype(int)]))
        a, b, r = _sector_modes(self.t_lo[idx], self.t_up[idx], self.m)
        wts = self.g[idx]
        if lo_end < self.l_end:
            # per bin: the g-weighted mean of each mode (second-order accurate, f is smooth)
            starts = edges[:-1] - lo_end
            gsum = np.add.reduceat(self.g[lo_end:], starts)
            binned = [np.add.reduceat(self.g[lo_end:] * x, starts) / gsum
                      for x in _sector_modes(self.t_lo[lo_end:], self.t_up[lo_end:], self.m)]
            a, b, r = (np.concatenate([x, y]) for x, y in zip((a, b, r), binned))
            wts = np.concatenate([wts, gsum])
        t = np.concatenate([a, b, r])
        wt = np.concatenate([0.5 * wts, 0.5 * wts, 0.5 * wts * (self.m - 1)])
        far = self.far_upper(1.0)
        t_far = float(self._k_far / (self.m * float(self.l_end) ** 4))
        if far > 0 and t_far > 0 and math.isfinite(far):
            t = np.append(t, t_far)
            wt = np.append(wt, 0.5 * far / float(mode_entropy(np.array([t_far]))[0]))
        keep = (wt > 0) & (t > 0)
        return t[keep], wt[keep]
