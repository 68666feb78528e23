"""Temperature of a Gibbs state: validation and the Bose–Einstein factor coth(ω/2T).

The thermal state ρ ∝ exp(−H/T) of H = ½pᵀM⁻¹p + ½qᵀVq has, with K = M^{-1/2} V M^{-1/2} = U Ω² Uᵀ,

    X_T = ½ M^{-1/2} U diag(coth(ω/2T)/ω) Uᵀ M^{-1/2},
    P_T = ½ M^{1/2} U diag(ω coth(ω/2T)) Uᵀ M^{1/2},

i.e. each normal mode's ground-state variance times coth(ω/2T) = 1 + 2 n_B(ω) (k_B = ħ = 1).
T = 0 is the ground state: the factor is exactly 1 and every backend runs its ground-state path.
"""

import math

import numpy as np

__all__ = ["check_temperature", "coth_factor"]


def check_temperature(temperature):
    """Return ``temperature`` as a float, or raise ValueError naming the bad value.

    Examples
    --------
    >>> check_temperature(0), check_temperature(0.25)
    (0.0, 0.25)
    """
    if isinstance(temperature, bool):
        raise ValueError(f"temperature={temperature!r} must be a finite number >= 0 (0 is the "
                         "ground state)")
    try:
        t = float(temperature)
    except (TypeError, ValueError):
        raise ValueError(f"temperature={temperature!r} must be a finite number >= 0 (0 is the "
                         "ground state)") from None
    if not (math.isfinite(t) and t >= 0):
        raise ValueError(f"temperature={temperature!r} must be a finite number >= 0 (0 is the "
                         "ground state)")
    return t


def coth_factor(omega, temperature):
    """coth(ω/2T) = 1 + 2/(e^{ω/T} − 1) per mode, exactly 1.0 at T = 0 (ω > 0).

    Examples
    --------
    >>> import numpy as np
    >>> coth_factor(np.array([1.0, 2.0]), 0.0).tolist()
    [1.0, 1.0]
    >>> bool(abs(coth_factor(np.array([1.0]), 1.0)[0] - 1 / np.tanh(0.5)) < 1e-15)
    True
    """
    omega = np.asarray(omega, dtype=float)
    if temperature == 0:
        return np.ones_like(omega)
    with np.errstate(over="ignore"):
        return 1.0 + 2.0 / np.expm1(omega / temperature)
