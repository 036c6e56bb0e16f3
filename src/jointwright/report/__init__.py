"""The report layer: the HTML report of a design (and of a sizing, frontier or study) with figures.

The only part of the package that draws (matplotlib, in :mod:`.figures`).
"""

from .build import build_report

__all__ = ["build_report"]
