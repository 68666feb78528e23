"""Shared CLI plumbing: one-line errors, number parsing, and JSON/human output."""

import argparse
import contextlib
import json
import math
import re
import sys

from .._arguments import did_you_mean
from .._errors import ConvergenceError, InsufficientMemoryError
from .._numerics import is_inf_word

__all__ = ["ArgumentParser", "progress_bars", "USER_ERRORS", "fail", "parse_extent", "parse_order", "positive_float", "positive_int",
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


#: Seconds a stage must run before its bar appears: quick work stays silent.
PROGRESS_DELAY = 2.0


@contextlib.contextmanager
def progress_bars(enabled=True, *, delay=None):
    """Show what lower layers report (:mod:`arealaw._progress`) as tqdm bars on stderr, one per
    stage (correlators, shifted solves, spectrum, ...), each with its ETA; a bar appears only
    once its stage has run ``delay`` seconds (default :data:`PROGRESS_DELAY`), so quick work
    prints nothing."""
    if not enabled:
        yield
        return
    delay = PROGRESS_DELAY if delay is None else delay
    from tqdm import tqdm

    from .._progress import reporting
    bars = {}

    def sink(stage, done, total):
        scale = 1000 if isinstance(total, float) else 1  # fractions: per mille
        t = None if total is None else int(round(total * scale))
        d = int(round(done * scale))
        bar = bars.get(stage)
        if bar is not None and (d < bar.n or bar.total != t):
            bar.close()  # the stage starts again (next region or set of shifts): a fresh bar,
            bar = None   # shown only if this pass itself runs longer than the delay
        if bar is None:
            bar = bars[stage] = tqdm(total=t, desc=stage, file=sys.stderr, delay=delay,
                                     leave=False, dynamic_ncols=True, mininterval=0.5, miniters=1,
                                     bar_format=None if scale == 1 else
                                     "{desc}: {percentage:3.0f}%|{bar}| [{elapsed}<{remaining}]")
        bar.update(d - bar.n)

    try:
        with reporting(sink):
            yield
    finally:
        for bar in bars.values():
            bar.close()
