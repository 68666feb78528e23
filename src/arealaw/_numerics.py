"""Memory estimates and the up-front refusal of computations that would not fit."""

import os

from ._errors import InsufficientMemoryError

__all__ = ["available_bytes", "format_bytes", "require_memory"]


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


def require_memory(nbytes, what, alternative, *, fraction=0.8):
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
