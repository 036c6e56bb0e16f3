"""The report layer: the HTML report of a design (and of a sizing, frontier or study) with figures.

The only part of the package that draws (matplotlib, in :mod:`.figures`, :mod:`.capability_figures`
and :mod:`.sweep_figures`). ``build_report`` is
loaded on first use, so the command line can take the report's wording helpers (:mod:`.markup`)
without the physics the report builds on.
"""

from __future__ import annotations

from typing import Any

__all__ = ["build_report"]


def __getattr__(name: str) -> Any:
    if name == "build_report":
        from .build import build_report

        return build_report
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
