"""Numerics policy, written once: rounding unit, default tolerances, parsing of ``inf``, memory.

Every layer reads these instead of restating them, so a policy changes in one place.
"""

import os

import numpy as np

from ._errors import InsufficientMemoryError

__all__ = ["DEFAULT_ENTROPY_TOL", "DEFAULT_TOL", "EPS", "INF_WORDS", "MEMORY_FRACTION",
           "MIN_TOL", "available_bytes", "check_tol", "fits_in_memory", "format_bytes", "is_inf_word",
           "require_memory"]

#: Unit roundoff of float64 (the ε of every rounding model in the error bounds).
EPS = float(np.finfo(float).eps)

#: Default target accuracy of the correlators X, P (absolute, lattice units): ``tol`` of
#: :func:`arealaw.entropy`, ``--tol`` of the CLI and ``tol`` of scenario files.
DEFAULT_TOL = 1e-10

#: Default accuracy requested of the entropy by the restricted solver
#: (``entropy_tol`` of :func:`arealaw.restricted_spectrum`).
DEFAULT_ENTROPY_TOL = 1e-10

#: Smallest accepted ``tol``: correlator entries of order one computed in float64 carry
#: rounding errors of a few tens of ε (sums over modes, quadrature nodes); asking for less than
#: this would promise an accuracy no method delivers (common practice, no source).
MIN_TOL = 1e-14

#: Spellings accepted for an infinite value (axis lengths, Rényi orders).
INF_WORDS = ("inf", "infinite", "infinity", "∞")

#: Share of the available memory a single computation may take.
MEMORY_FRACTION = 0.8


def check_tol(tol, name="tol"):
    """Return ``tol`` as a float after checking it is a number in (0, 1); else ValueError.

    Examples
    --------
    >>> check_tol(1e-8)
    1e-08
    >>> check_tol(0)
    Traceback (most recent call last):
    ...
    ValueError: tol=0 must be a number in (0, 1), e.g. 1e-10
    """
    if isinstance(tol, bool) or not (isinstance(tol, (int, float, np.floating)) and 0 < tol < 1):
        raise ValueError(f"{name}={tol!r} must be a number in (0, 1), e.g. {DEFAULT_TOL:g}")
    if tol < MIN_TOL:
        raise ValueError(f"{name}={tol:g} is below what double-precision correlators can reach "
                         f"(entries of X and P carry rounding errors of about {MIN_TOL:g}); "
                         f"use {name} >= {MIN_TOL:g}")
    return float(tol)


def is_inf_word(value):
    """True when ``value`` is a string spelling infinity ('inf', 'infinity', '∞', any case).

    Examples
    --------
    >>> is_inf_word(" Inf "), is_inf_word("12"), is_inf_word(float("inf"))
    (True, False, False)
    """
    return isinstance(value, str) and value.strip().lower() in INF_WORDS


def fits_in_memory(nbytes, *, fraction=MEMORY_FRACTION):
    """True when ``nbytes`` fits in ``fraction`` of the memory available now."""
    return nbytes <= fraction * available_bytes()


def available_bytes():
    """Bytes of memory available to this process now (MemAvailable, else total physical)."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        return 8 * 2**30


def format_bytes(n):
    """Human-readable size, e.g. ``format_bytes(3 * 2**30) == '3.0 GiB'``."""
    n = float(n)
    for unit in ("B", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if abs(n) < 1024 or unit == "PiB":
            return f"{n:.1f} {unit}" if unit != "B" else f"{int(n)} B"
        n /= 1024
    return f"{n:.1f} PiB"  # pragma: no cover


def require_memory(nbytes, what, alternative, *, fraction=MEMORY_FRACTION):
    """Raise :class:`InsufficientMemoryError` unless ``nbytes`` fits in free memory.

    Parameters
    ----------
    nbytes : float
        Estimated peak allocation.
    what : str
        What would be allocated, for the message.
    alternative : str
        What the user can do instead (e.g. another method).
    fraction : float
        Share of the available memory a computation may take.
    """
    limit = fraction * available_bytes()
    if nbytes > limit:
        raise InsufficientMemoryError(
            f"{what} needs about {format_bytes(nbytes)} but only {format_bytes(limit)} "
            f"is available; {alternative}"
        )
