"""Normalisers of public arguments: one per kind of argument, each naming it in its error.

Every public entry point (the API, ``arealaw`` options, scenario keys) passes user values through
these, so that a wrong type or a value that would be silently truncated (``box(net, 2.7)``,
``hypercubic(True)``) is refused with one line that names the argument and says what to give,
never an AttributeError from deep inside or a silently different number.
"""

import difflib
import math
import numbers

import numpy as np

__all__ = ["allowed_hint", "choice", "did_you_mean", "int_vector", "real_number", "real_vector", "unknown_name",
           "whole_number"]


def did_you_mean(word, allowed):
    """``"; did you mean 'x'?"`` for the closest allowed word, or ``""`` when none is close."""
    close = difflib.get_close_matches(str(word), [str(a) for a in allowed], n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def unknown_name(kind, word, allowed, where=""):
    """The message for an unknown key / option / name: the closest match and all allowed ones.

    Examples
    --------
    >>> unknown_name("lattice key", "shpe", ["shape", "mass"])
    "unknown lattice key 'shpe'; did you mean 'shape'? allowed: shape, mass"
    """
    where = f" {where}" if where else ""
    return f"unknown {kind} {word!r}{where}{allowed_hint(word, allowed)}"


def allowed_hint(word, allowed, *, quoted=False):
    """``"; did you mean 'x'? allowed: a, b"`` (or ``"; allowed: a, b"`` when nothing is close)."""
    hint = did_you_mean(word, allowed)
    show = repr if quoted else str
    return f"{hint + ' ' if hint else '; '}allowed: {', '.join(map(show, allowed))}"


def _is_real(value):
    return isinstance(value, numbers.Real) and not isinstance(value, (bool, np.bool_))


def _show(value):
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


def real_number(value, name, *, minimum=None, strict=False, finite=True):
    """A real number (not a bool or a string), optionally ``>= minimum`` (``> minimum`` if strict).

    Examples
    --------
    >>> real_number(0.5, "mass", minimum=0)
    0.5
    >>> real_number("3", "ball radius")
    Traceback (most recent call last):
    ...
    ValueError: ball radius must be a number, got '3' (str)
    """
    if not _is_real(value):
        raise ValueError(f"{name} must be a number, got {_show(value)} ({type(value).__name__})")
    x = float(value)
    if math.isnan(x) or (finite and math.isinf(x)):
        raise ValueError(f"{name} must be a finite number, got {_show(value)}")
    if minimum is not None and (x <= minimum if strict else x < minimum):
        raise ValueError(f"{name} must be {'>' if strict else '>='} {minimum:g}, got {x:g}")
    return x


def whole_number(value, name, *, minimum=None):
    """An integer (``2`` or ``2.0``; not ``2.7``, a bool or a string), optionally ``>= minimum``.

    Examples
    --------
    >>> whole_number(4.0, "box size", minimum=1)
    4
    >>> whole_number(2.7, "box size")
    Traceback (most recent call last):
    ...
    ValueError: box size must be a whole number, got 2.7 (it would be truncated)
    """
    if isinstance(value, (numbers.Integral, np.integer)) and not isinstance(value, (bool, np.bool_)):
        n = int(value)
    elif _is_real(value):
        if not math.isfinite(value) or value != math.floor(value):
            raise ValueError(f"{name} must be a whole number, got {_show(value)} "
                             "(it would be truncated)")
        n = int(value)
    else:
        raise ValueError(f"{name} must be a whole number, got {_show(value)} "
                         f"({type(value).__name__})")
    if minimum is not None and n < minimum:
        raise ValueError(f"{name} must be >= {minimum}, got {n}")
    return n


def _entries(value, d, name, what):
    if value is None:
        raise ValueError(f"{name} must be {what} or one per axis, got None")
    if isinstance(value, (str, bytes, dict, set)):
        raise ValueError(f"{name} must be {what} or one per axis, got {_show(value)} "
                         f"({type(value).__name__})")
    entries = list(value) if isinstance(value, (list, tuple, np.ndarray)) else [value]
    if isinstance(value, np.ndarray) and value.ndim > 1:
        raise ValueError(f"{name} must be {what} or a flat list of one per axis, got an array "
                         f"of shape {value.shape}")
    if len(entries) == 1 and d is not None:
        entries = entries * d
    if d is not None and len(entries) != d:
        raise ValueError(f"{name} has {len(entries)} values but the lattice has {d} axes; "
                         "give one value or one per axis")
    return entries


def int_vector(value, d, name, *, minimum=None):
    """One whole number per axis (a single number is repeated), as an int64 array."""
    entries = _entries(value, d, name, "a whole number")
    return np.array([whole_number(v, name, minimum=minimum) for v in entries],
                    dtype=np.int64)


def real_vector(value, d, name):
    """One finite real number per axis (a single number is repeated), as a float array."""
    entries = _entries(value, d, name, "a number")
    return np.array([real_number(v, name) for v in entries], dtype=float)


def choice(value, name, allowed):
    """A string from ``allowed`` (case-insensitive), with a did-you-mean hint when misspelt."""
    if not isinstance(value, str):
        raise ValueError(f"{name} must be one of {', '.join(allowed)} (a string), got "
                         f"{_show(value)} ({type(value).__name__})")
    low = value.strip().lower()
    if low not in allowed:
        raise ValueError(f"{name} {value!r} is not one of {', '.join(allowed)}"
                         f"{did_you_mean(low, allowed)}")
    return low
