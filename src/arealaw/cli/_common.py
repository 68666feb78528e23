"""Shared CLI plumbing: one-line errors, number parsing, and JSON/human output."""

import argparse
import json
import math
import re
import sys

from .._arguments import did_you_mean
from .._errors import ConvergenceError, InsufficientMemoryError
from .._numerics import is_inf_word

__all__ = ["ArgumentParser", "USER_ERRORS", "fail", "parse_extent", "parse_order", "positive_float", "positive_int",
           "print_json"]

#: Exceptions that mean "the user asked for something impossible or wrong": one line, exit 2.
USER_ERRORS = (ValueError, OSError, InsufficientMemoryError,
               ConvergenceError)


class ArgumentParser(argparse.ArgumentParser):
    """argparse with a one-line error (no usage dump) that points at ``--help``."""

    def error(self, message):
        self.exit(2, f"{self.prog}: error: {message}{self._suggestion(message)} "
                     f"(see '{self.prog} --help')\n")

    def _suggestion(self, message):
        """A did-you-mean hint for a misspelt option or choice (argparse gives none here)."""
        m = re.match(r"unrecognized arguments: (\S+)", message)
        if m:
            options = [o for a in self._actions for o in a.option_strings]
            return did_you_mean(m.group(1).split("=")[0], options)
        m = re.search(r"invalid choice: '([^']*)' \(choose from (.*)\)", message)
        if m:
            return did_you_mean(m.group(1), re.findall(r"'([^']*)'", m.group(2)))
        return ""


class HelpFormatter(argparse.RawDescriptionHelpFormatter):
    """Keep the examples in epilogs as written."""


def fail(prog, exc):
    """Print one line for a user error and return the exit status."""
    msg = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    print(f"{prog}: error: {msg}", file=sys.stderr)
    return 2


def positive_int(text):
    """A whole number >= 1."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"{text!r} must be >= 1")
    return n


def positive_float(text):
    """A finite number > 0 (e.g. seconds)."""
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not (x > 0 and math.isfinite(x)):
        raise argparse.ArgumentTypeError(f"{text!r} must be a finite number > 0")
    return x


def parse_extent(text):
    """An axis length: positive integer or 'inf'."""
    if is_inf_word(text):
        return math.inf
    try:
        return positive_int(text)
    except argparse.ArgumentTypeError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a positive integer or 'inf'") from None


def parse_order(text):
    """A Rényi order: number > 0 or 'inf'."""
    from ..spectrum._measures import normalize_order
    try:
        return normalize_order(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def print_json(obj):
    print(json.dumps(obj, indent=2, sort_keys=False, allow_nan=False))
