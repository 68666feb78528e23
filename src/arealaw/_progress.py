"""Progress of long computations: a tiny callback protocol that lower layers report into.

Lower layers call :func:`report` at natural steps (``"correlators"``, ``"shifted solves"``,
``"spectrum"``); nothing happens unless a caller has installed a sink with :func:`reporting`.
A sink is any callable ``sink(stage, done, total)``: ``done`` out of ``total`` steps of
``stage`` (``total`` None when unknown).  Lower layers never import the CLI or tqdm; the CLI
turns reports into progress bars on stderr.

Examples
--------
>>> seen = []
>>> with reporting(lambda stage, done, total: seen.append((stage, done, total))):
...     report("spectrum", 1, 3)
>>> report("spectrum", 2, 3)  # no sink installed: ignored
>>> seen
[('spectrum', 1, 3)]
"""

import contextlib
import contextvars

__all__ = ["report", "reporting"]

_SINK = contextvars.ContextVar("arealaw_progress_sink", default=None)


@contextlib.contextmanager
def reporting(sink):
    """Send every :func:`report` inside the ``with`` block to ``sink(stage, done, total)``."""
    token = _SINK.set(sink)
    try:
        yield sink
    finally:
        _SINK.reset(token)


def report(stage, done, total=None):
    """Report that ``done`` of ``total`` steps of ``stage`` are finished (cheap when unheard)."""
    sink = _SINK.get()
    if sink is not None:
        sink(stage, done, total)
