"""Figures and the self-contained HTML report."""

from ._report import write_report

__all__ = ["write_report"]
