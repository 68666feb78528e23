"""Restricted symplectic spectrum: only the modes far from ν = ½, matrix-free, with a certified tail.

C = X_A P_A is self-adjoint in the P_A inner product ⟨u, v⟩ = uᵀ P_A v, so a block Lanczos
process in that inner product needs only products with X_A and P_A (no square root, no
factorisation).  Its Ritz values interlace the exact eigenvalues from below (θ_i ≤ t_i, Cauchy),
so with the exact, cheap trace Σ t = tr(X_A P_A) − n/4 the whole deficit

    T = tr(X_A P_A) − n/4 − Σ_{i≤k} θ_i  ≥  Σ_{i≤k} (t_i − θ_i) + Σ_{i>k} t_i  ≥ 0

bounds both the unconverged part of the kept modes and the omitted ones, missed eigenvalues
included.  Every per-mode entropy is increasing and concave with s(0) = 0, so (while T/(n − k) is
below the smallest kept t) the error of the kept sum is at most (n − k)·s(T/(n − k)): a
:class:`~arealaw.Tail` with ``count = n − k`` and ``sum_t = T`` (plus rounding and block errors).

Ground states only: it pays when almost every mode sits at ν ≈ ½ (k ∝ boundary ≪ n).  A Gibbs state at T > 0 lifts every mode (ν ≥ ½ coth(ω_max/2T) in each normal
mode, and the region's bulk carries extensive thermal entropy), so T/(n − k) would stay large and
the tail bound useless: ``methods.restricted_plan`` never chooses it at T > 0 (the full dense
eigenproblem is used, or refused with its memory estimate).
"""

import enum
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse.linalg as spla

from .._errors import ConvergenceError
from ._measures import mode_entropy
from .._numerics import DEFAULT_ENTROPY_TOL, EPS, check_tol, require_memory
from ._symplectic import SymplecticSpectrum, Tail, symplectic_spectrum
from ..correlators import apply_operator, as_array, operator_trace
from .._progress import report
from ._block_krylov import band_ritz, dense_ritz, norm_bound, orthonormalize_block

__all__ = ["restricted_spectrum"]


class LanczosStatus(str, enum.Enum):
    """How a block Lanczos run ended."""

    DONE = "done"                  # the bound met the request, or more vectors cannot lower it
    INCONSISTENT = "inconsistent"  # stalled while the deficit shows modes above the threshold
    FULL = "full"                  # the basis would span the region (the dense form is cheaper)
    MAXITER = "maxiter"            # the allowed number of blocks was used up


@dataclass(frozen=True)
class TailAssessment:
    """Kept Ritz values and the certified tail at one checkpoint (see :func:`_assess`)."""

    k: int                  # modes kept
    t: np.ndarray           # their Ritz values θ_1 ≥ … ≥ θ_k
    rho: float              # Ritz rounding model per kept mode
    tail_sum: float         # certified Σt of the n − k omitted modes (with rounding, block errors)
    bound: float            # entropy bound of the tail, (n − k)·s(tail_sum/(n − k))
    valid: bool             # some k satisfies the concavity condition (else bound is inf)
    consistent: bool = False  # the deficit could hold only modes below the threshold
    deficit: float = 0.0    # trace deficit beyond the kept Ritz values
    floor: float = 0.0      # the part of tail_sum from rounding and block errors
    floor_bound: float = 0.0  # the bound a zero deficit would leave (more vectors cannot beat it)
    kept_bound: float = 0.0   # entropy error of the kept modes (Ritz rounding, block errors)


@dataclass(frozen=True)
class _Operators:
    """X_A, P_A (dense array or operator, one of each pair is None) and what bounds the tail."""

    xa: object
    x_op: object
    pa: object
    p_op: object
    n: int
    trace_t: float
    trace_err: float
    block_err: float
    block_fro: float = math.inf   # Frobenius-type bound: Σ_{i≤k} |δt_i| ≤ √k·block_fro


@dataclass(frozen=True)
class _LanczosRun:
    """Outcome of one block Lanczos run."""

    tail: TailAssessment    # the last checkpoint (None if none was reached)
    krylov_dim: int
    dropped: int            # directions dropped below rounding and refilled at random
    status: LanczosStatus


def restricted_spectrum(x, p, *, entropy_tol=DEFAULT_ENTROPY_TOL, threshold=None, trace=None,
                        x_error=0.0, p_error=0.0, block_size=None, maxiter=None, seed=0,
                        info=None, trace_norm_errors=None, x_frobenius=None, p_frobenius=None):
    """Symplectic modes of a region with t = ν² − ¼ above a threshold, from X_A, P_A as operators.

    Parameters
    ----------
    x, p : LinearOperator or ndarray, shape (n, n)
        The region blocks X_A, P_A (symmetric positive definite); only products are used.
    entropy_tol : float
        Requested accuracy of the entropy (absolute; not the accuracy of X_A, P_A, which
        their producer controls and reports through ``x_error``, ``p_error``).  The iteration
        stops once the certified bound (omitted tail plus the kept modes' errors) is below it,
        or once it is within 1.5× of the floor that rounding and the block errors already set
        (more vectors could not lower it further), or when the deficit stalls for three
        checkpoints with every mode above the threshold accounted for.  A deficit that
        stalls while it still shows missed modes restarts with a doubled block.
    threshold : float, optional
        Modes with t above it are kept.  The default starts at ``entropy_tol / 100`` and is
        lowered tenfold (down to 64·ε) whenever every mode above it is found but the omitted
        tail's bound, about (its Σt)·(1 + ln((n − k)/Σt)), still exceeds ``entropy_tol``; an
        explicit threshold is kept as given.
    trace : (float, float), optional
        (tr(X_A P_A) − n/4, bound on its error) if the caller knows it cheaply; otherwise it is
        formed by :func:`operator_trace`.
    trace_norm_errors : (float, float), optional
        When the given ``trace`` already bounds the effect of the blocks' entry errors: the
        spectral-norm errors (rx, rp) of the operators beyond those entries (FFT rounding).
    x_error, p_error : float
        Spectral-norm error bounds of the blocks (as in :func:`~arealaw.symplectic_spectrum`).
    x_frobenius, p_frobenius : float, optional
        Frobenius-norm error bounds of the blocks (default √n times the spectral ones); entry
        bounds e give n·e.  They certify the kept modes' total through Hoffman–Wielandt.
    block_size : int, optional
        Lanczos block size (default: 8 … 64 from n).
    maxiter : int, optional
        Maximal number of Lanczos blocks; :class:`~arealaw.ConvergenceError` when exhausted.
    seed : int
        Seed of the random starting block (results do not depend on it beyond rounding).

    Returns
    -------
    SymplecticSpectrum
        Kept modes with ``tail = Tail(n − k, T, T)``; ``info`` has the Krylov dimension, the
        trace, the threshold, the tail bound and the attempts.  Where the Krylov space would
        span the whole region the dense form is solved instead (``info['restricted']`` False,
        no tail).

    Raises
    ------
    ConvergenceError
        ``maxiter`` blocks were not enough, or missed modes persisted through restarts; the
        message gives the bound reached.

    Notes
    -----
    The reported bound adds, per kept mode, the Ritz rounding model 16·√m·ε·‖C‖ (plus any
    discarded off-band Lanczos coefficients) and the block error ‖X‖δP + ‖P‖δX + δXδP; the
    tail total adds the trace rounding, k times the Ritz rounding and block errors, and the
    blocks' effect on the trace (δX·tr P + δP·tr X + n·δX·δP for dense blocks).
    The Rényi bound for orders below 1 is much weaker (s_n has an infinite slope at t = 0).

    Examples
    --------
    >>> import numpy as np
    >>> from arealaw import von_neumann_entropy, entropy_error_bound
    >>> from arealaw import restricted_spectrum
    >>> nu = np.array([1.5, 0.9, 0.6] + [0.5] * 37)
    >>> spec = restricted_spectrum(np.diag(nu), np.diag(nu), entropy_tol=1e-12)
    >>> len(spec), bool(entropy_error_bound(spec) < 1e-9)
    (3, True)
    """
    n = x.shape[0]
    if x.shape != (n, n) or p.shape != (n, n):
        raise ValueError(f"X_A {x.shape} and P_A {p.shape} must be square operators of one shape")
    if n == 0:
        raise ValueError("the region is empty; a symplectic spectrum needs at least one site")
    tol = check_tol(entropy_tol, "entropy_tol")
    # modes below τ = tol/100 carry a tail whose concavity bound is about tol (see module doc)
    tau = float(max(tol / 100, 64 * EPS) if threshold is None else threshold)
    if not tau > 0:
        raise ValueError(f"threshold={threshold!r} must be > 0")
    xa, pa = as_array(x), as_array(p)
    x_op = spla.aslinearoperator(x) if xa is None else None
    p_op = spla.aslinearoperator(p) if pa is None else None
    rng = np.random.default_rng(seed)
    b = int(block_size or min(64, max(8, n // 200)))
    b = max(1, min(b, n))
    max_blocks = int(maxiter) if maxiter is not None else max(1, -(-n // b))
    if max_blocks < 1:
        raise ValueError(f"maxiter={maxiter!r} must be a positive number of Lanczos blocks")
    trace_t, trace_err = trace if trace is not None else operator_trace(x if xa is None else xa,
                                                                        p if pa is None else pa)
    xn = norm_bound(x_op, xa, n, rng) if (p_error or x_error) else 0.0
    pn = norm_bound(p_op, pa, n, rng) if (p_error or x_error) else 0.0
    block_err = xn * p_error + pn * x_error + x_error * p_error
    # Hoffman–Wielandt: the top k modes move by at most √k·‖Δ‖_F in total, with
    # ‖Δ‖_F ≤ ‖P‖‖F‖_F + ‖X + F‖‖G‖_F for the two symmetric forms P^½XP^½ and LᵀPL;
    # entry bounds give ‖F‖_F ≤ n·e_x (far below √n·‖F‖₂ = n^{3/2}·e_x)
    x_fro = math.sqrt(n) * x_error if x_frobenius is None else float(x_frobenius)
    p_fro = math.sqrt(n) * p_error if p_frobenius is None else float(p_frobenius)
    block_fro = (pn * x_fro + (xn + x_error) * p_fro) if (x_fro or p_fro) else 0.0
    # the exact modes' total differs from the blocks' by at most δX·tr P + δP·tr X + n·δX·δP
    # (P, X ⪰ 0): far below n·(per-mode block error) when ‖X_A‖ ≫ tr X_A / n (massless)
    if trace_norm_errors is not None:
        # the given trace already holds the entry errors of the blocks; only the operators'
        # own errors (spectral norms rx, rp, e.g. FFT rounding) remain, n modes at most each
        rx, rp = trace_norm_errors
        xn = xn or norm_bound(x_op, xa, n, rng)
        pn = pn or norm_bound(p_op, pa, n, rng)
        trace_err = trace_err + n * (xn * rp + pn * rx + rx * rp)
    elif xa is not None and pa is not None:
        trace_err = trace_err + min(n * block_err, x_error * float(np.trace(pa))
                                    + p_error * float(np.trace(xa)) + n * x_error * p_error)
    else:
        trace_err = trace_err + n * block_err

    ops = _Operators(xa=xa, x_op=x_op, pa=pa, p_op=p_op, n=n, trace_t=trace_t,
                     trace_err=trace_err, block_err=block_err, block_fro=block_fro)
    attempts = []
    while True:
        run = _block_lanczos(ops, block_size=b, max_blocks=max_blocks, threshold=tau,
                             entropy_tol=tol, rng=rng, adaptive=threshold is None)
        result, status = run.tail, run.status
        attempts.append((b, run.krylov_dim, status.value))
        if status is LanczosStatus.DONE:
            break
        if status is LanczosStatus.FULL:
            return _dense_fallback(x, p, xa, pa, x_error, p_error, info, attempts)
        if status is LanczosStatus.INCONSISTENT and 2 * b <= max(n // 2, 1) and maxiter is None:
            # the deficit says modes above the threshold were missed (a multiplicity larger
            # than the block, or an unlucky start): restart with a wider block
            b *= 2
            max_blocks = max(1, -(-n // b))
            continue
        reached = result.bound if result is not None and result.valid else math.inf
        got = f"{reached:.3g}" if math.isfinite(reached) else "not yet valid"
        why = ("the trace deficit shows missed modes above the threshold" if
               status is LanczosStatus.INCONSISTENT
               else f"{max_blocks} Lanczos blocks of {b} were not enough")
        raise ConvergenceError(
            f"restricted spectrum did not converge ({why}): tail bound on the entropy reached "
            f"{got} (requested {tol:g}); raise maxiter or entropy_tol",
            residual=reached, iterations=run.krylov_dim // b)
    k = result.k
    t_kept = np.asarray(result.t)
    t_err = np.full(k, result.rho + block_err)
    neg = t_kept < 0
    t_err[neg] = np.maximum(t_err[neg], -t_kept[neg])
    tail_sum = result.tail_sum
    extra_info = dict(info or {})
    extra_info.update({"restricted": True, "krylov_dim": int(run.krylov_dim), "block_size": b,
                       "threshold": tau, "trace_t": trace_t, "trace_error": trace_err,
                       "tail_bound": result.bound, "modes_kept": int(k),
                       "dropped_directions": int(run.dropped),
                       "attempts": attempts})
    # Σ_{i≤k}|δt_i|: Ritz rounding per mode, block errors by Hoffman–Wielandt (or Weyl)
    nuclear = k * result.rho + min(k * block_err, math.sqrt(k) * ops.block_fro)
    nuclear += float(np.sum(-t_kept[neg]))
    return SymplecticSpectrum(t=np.maximum(t_kept, 0.0), t_error=t_err, weights=np.ones(k),
                              tail=Tail(count=float(n - k), sum_t=tail_sum,
                                        max_t=max(tail_sum, 0.0)),
                              clamped=int(neg.sum()), info=extra_info, nuclear_error=nuclear)


def _dense_fallback(x, p, xa, pa, x_error, p_error, info, attempts):
    """Every mode matters (tiny region or tiny tol): form the blocks and solve densely."""
    n = x.shape[0]
    require_memory(6 * 8.0 * n * n, f"a dense symplectic eigenproblem of {n} sites",
                   "use a larger tol")
    eye = None if xa is not None and pa is not None else np.eye(n)
    xd = xa if xa is not None else np.asarray(x.matmat(eye))
    pd = pa if pa is not None else np.asarray(p.matmat(eye))
    extra = dict(info or {})
    extra.update({"restricted": False, "attempts": attempts,
                  "fallback": "the Krylov space would span the region; dense eigenproblem"})
    return symplectic_spectrum(xd, pd, x_error=x_error, p_error=p_error, info=extra)


def _block_lanczos(ops, *, block_size, max_blocks, threshold, entropy_tol, rng, adaptive=True):
    """Block Lanczos on C − ¼I in the P inner product with checkpoints every ~10 % of growth.

    ``ops`` holds the operators and the trace; returns a :class:`_LanczosRun`.
    """
    xa, x_op, pa, p_op, n = ops.xa, ops.x_op, ops.pa, ops.p_op, ops.n
    b, tau, tol = block_size, threshold, entropy_tol
    # an explicit threshold is kept; the default one may be lowered to meet tol
    tau_min = min(tau, 64 * EPS) if adaptive else tau
    cap_cols = min(n + b, max_blocks * b + b)
    require_memory(2 * 8.0 * n * cap_cols, f"a restricted spectrum with up to {cap_cols} "
                   f"Lanczos vectors of {n} sites", "use a smaller region or a larger tol")
    q_all = np.empty((n, cap_cols))
    w_all = np.empty((n, cap_cols))
    q, pq, _, _, _ = orthonormalize_block(rng.standard_normal((n, b)), q_all[:, :0],
                                           w_all[:, :0], 1.0, rng, p_op, pa)
    q_all[:, :b], w_all[:, :b] = q, pq
    diag_blocks, sub_blocks = [], []
    full_cols = {}
    offband = 0.0
    scale = 1.0
    dropped_total = 0
    history = []
    next_check = 2
    result = None
    m = b
    for j in range(max_blocks):
        report("spectrum", j, max_blocks)
        m = (j + 1) * b
        s = j * b
        if m + b > n:
            # the Krylov space is about to fill the whole region: the dense form is cheaper
            return _LanczosRun(result, m, dropped_total, LanczosStatus.FULL)
        zq = apply_operator(x_op, xa, w_all[:, s:m])       # C q_j = X (P q_j)
        zq -= 0.25 * q_all[:, s:m]                  # shift: T − ¼I has the t as eigenvalues
        qn, pqn, h, r, dropped = orthonormalize_block(zq, q_all[:, :m], w_all[:, :m], scale,
                                                       rng, p_op, pa)
        d = h[s:m]
        diag_blocks.append(0.5 * (d + d.T))
        if dropped_total:
            # random fill vectors broke the Krylov structure: keep this column block whole
            full_cols[j] = h.copy()
        elif s:
            offband = max(offband, float(np.abs(h[:max(0, s - b)]).max(initial=0.0)))
        dropped_total += dropped
        sub_blocks.append(r)
        q_all[:, m:m + b], w_all[:, m:m + b] = qn, pqn
        if j + 1 < next_check and j + 1 < max_blocks:
            continue
        next_check = max(j + 2, int(1.1 * (j + 1)) + 1)
        theta = (dense_ritz(diag_blocks, sub_blocks, full_cols, b) if full_cols else
                 band_ritz(diag_blocks, sub_blocks, b))
        scale = max(scale, abs(float(theta[0])) + 0.25)
        result = _assess(theta, tau, n, m, ops, scale, offband)
        # every mode above τ is found but the tail below it still holds more than tol: count
        # lower Ritz values as modes (τ/10 at a time, down to rounding) instead of stopping
        while (result.valid and result.consistent and tau > tau_min
               and result.bound + result.kept_bound > tol):
            tau = max(tau / 10, tau_min)
            result = _assess(theta, tau, n, m, ops, scale, offband)
        history.append((m, result.k, result.deficit))
        if not result.valid:
            continue
        # done when the bound meets tol, or when what rounding and block errors already cost
        # leaves little to gain (more vectors could lower the bound by less than a third), or
        # when the deficit has stopped falling for several checkpoints with every mode above
        # the threshold accounted for (the Lanczos process has nothing more to find)
        total = result.bound + result.kept_bound
        if total <= tol or (result.consistent and (
                total <= 1.5 * (result.floor_bound + result.kept_bound)
                or _stagnated(history, 3))):
            return _LanczosRun(result, m, dropped_total, LanczosStatus.DONE)
        if _stagnated(history, 3):
            return _LanczosRun(result, m, dropped_total, LanczosStatus.INCONSISTENT)
    return _LanczosRun(result, m, dropped_total, LanczosStatus.MAXITER)


def _assess(theta, tau, n, m, ops, scale, offband):
    """Kept modes (top Ritz values ≥ τ), the certified tail total and its entropy bound.

    Among the admissible k (tail mean below the smallest kept t, where the concavity bound
    holds) the one with the smallest bound is taken.
    """
    trace_t, trace_err, block_err = ops.trace_t, ops.trace_err, ops.block_err
    block_fro = ops.block_fro
    k_tau = min(int(np.count_nonzero(theta >= tau)), n)
    # rounding of the Ritz values: ‖T − exact compression‖ from orthogonality loss and the
    # dropped off-band coefficients
    rho = 16.0 * math.sqrt(m) * EPS * scale + math.sqrt(m) * offband
    ks = np.arange(k_tau + 1)
    deficit = trace_t - np.concatenate([[0.0], np.cumsum(theta[:k_tau])])
    count = n - ks
    # Σ_{i≤k} t*_i ≥ Σ θ_i − k·(ρ + block error); the trace error already holds the blocks'
    kept_moves = ks * rho + np.minimum(ks * block_err, np.sqrt(ks) * block_fro)
    tail_sum = np.maximum(deficit, 0.0) + trace_err + kept_moves
    smallest = np.concatenate([[np.inf], theta[:k_tau]])
    mean = np.where(count > 0, tail_sum / np.maximum(count, 1), 0.0)
    # Jensen puts the worst case in the tail while the deficit per omitted mode stays below the
    # smallest kept t: kept modes already carry the block error δ in t_error, so their marginal
    # entropy is s'(t_k + δ) ≤ s'(deficit/count + δ), the tail's (block errors drop out)
    uncertain = np.maximum(deficit, 0.0) + trace_err + ks * rho
    admissible = (count == 0) | (uncertain <= smallest * np.maximum(count, 1))
    if not admissible.any():
        return TailAssessment(k=0, t=theta[:0], rho=rho, tail_sum=float(tail_sum[0]),
                              bound=math.inf, valid=False)
    bounds = np.where(admissible & (count > 0) & (tail_sum > 0),
                      count * mode_entropy(mean), 0.0)
    bounds = np.where(admissible, bounds, np.inf)
    # the kept modes' own error, as entropy_error_bound will count it (per mode, both sides):
    # a mode with θ below its error δ costs more kept than in the tail, so k minimises the sum
    kept_cost = _kept_cost(np.maximum(theta[:k_tau], 0.0), rho + block_err, kept_moves)
    k = int(np.argmin((bounds + kept_cost)[::-1]))
    k = k_tau - k                                   # the largest k among equal bounds
    # if every mode above τ were found, the deficit could hold only modes below τ
    consistent = deficit[k_tau] <= count[k_tau] * tau + trace_err + k_tau * rho
    floor = float(tail_sum[k] - max(deficit[k], 0.0))
    floor_bound = (float(count[k] * mode_entropy(np.array([floor / count[k]]))[0])
                   if count[k] > 0 and floor > 0 else 0.0)
    kept_bound = float(kept_cost[k])
    return TailAssessment(k=k, t=theta[:k], rho=rho, tail_sum=float(tail_sum[k]),
                          bound=float(bounds[k]), valid=True, consistent=bool(consistent),
                          deficit=float(max(deficit[k], 0.0)), floor=floor,
                          floor_bound=floor_bound, kept_bound=kept_bound)


def _kept_cost(kept, delta, moves):
    """Entropy error of the top k kept modes for every k (as entropy_error_bound counts it).

    Per mode at most the secant s(θ+δ) − s(θ−δ); in total at most (Σ_{i≤k}|δt_i|)·max slope
    (s is concave: the secant slope over [θ − min(δ, θ), θ] bounds every change per unit), with
    ``moves[k]`` ≥ Σ_{i≤k}|δt_i| (Ritz rounding and Hoffman–Wielandt).
    """
    s = mode_entropy(kept)
    down = s - mode_entropy(np.maximum(kept - delta, 0.0))
    secants = mode_entropy(kept + delta) - mode_entropy(np.maximum(kept - delta, 0.0))
    reach = np.minimum(delta, kept)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(reach > 0, down / np.where(reach > 0, reach, 1.0), np.inf)
    zero = np.zeros(1)
    by_secants = np.concatenate([zero, np.cumsum(secants)])
    max_slope = np.concatenate([zero, np.maximum.accumulate(slope)]) if kept.size else zero
    with np.errstate(invalid="ignore"):
        by_total = np.where(np.isfinite(max_slope), moves[:kept.size + 1] * max_slope, np.inf)
    return np.minimum(by_secants, by_total)


def _stagnated(history, checkpoints):
    """The trace deficit fell by less than 10 % per checkpoint, k settled, ``checkpoints`` times."""
    if len(history) < checkpoints + 2:
        return False
    for (_, k0, d0), (_, k1, d1) in zip(history[-checkpoints - 1:-1], history[-checkpoints:]):
        if not (d1 > 0.9 * d0 and k1 <= k0 + max(1, k0 // 100)):
            return False
    return True
