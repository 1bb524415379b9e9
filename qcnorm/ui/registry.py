"""The page registry: which pages the app shows, in which order.

To add a page (e.g. saving shifts, reviews, history), write a module in qcnorm/ui/ with
one ``render()`` function and add one :class:`PageSpec` line to :data:`PAGES`. app.py
draws the navigation from this list and calls the chosen page's ``render()`` inside the
error boundary of :mod:`qcnorm.ui.common`, so every page gets the caution and the
kind error handling without writing them again.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from dataclasses import dataclass

__all__ = ["PageSpec", "PAGES", "page", "page_keys"]


@dataclass(frozen=True, slots=True)
class PageSpec:
    key: str          # stable id kept in session state (qc_page) and used by tests
    title: str        # label in the navigation
    module: str       # module in qcnorm.ui with a render() function
    help: str = ""    # one line under the title
    needs_data: bool = True  # shows "load data first" when nothing is loaded

    def render_function(self) -> Callable[[], None]:
        mod = importlib.import_module(f"qcnorm.ui.{self.module}")
        return mod.render


PAGES: tuple[PageSpec, ...] = (
    PageSpec("load", "1 · Load", "load_page", "Measurements, characteristic and spec limits", needs_data=False),
    PageSpec("overview", "All characteristics", "overview_page", "Every characteristic of the file, ranked worst first"),
    PageSpec("shape", "2 · Shape", "shape_page", "Distribution, transform and normality"),
    PageSpec("stability", "3 · Stability", "stability_page", "Control chart, signals and assignable causes"),
    PageSpec("capability", "4 · Capability", "capability_page", "Indices, ppm and what they mean"),
    PageSpec("release", "5 · Save & baseline", "release_page", "Save this shift, freeze a baseline, PDF summary"),
    PageSpec("review", "6 · Review", "review_page", "Saved shifts awaiting review: evidence, checklist, decision", needs_data=False),
    PageSpec("history", "7 · History", "history_page", "Capability, signals and decisions over shifts", needs_data=False),
)


def page_keys() -> list[str]:
    return [p.key for p in PAGES]


def page(key: str) -> PageSpec:
    for p in PAGES:
        if p.key == key:
            return p
    return PAGES[0]
