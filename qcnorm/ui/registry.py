"""The page registry: which pages the app shows, in which order.

To add a page (e.g. saving shifts, reviews, history), write a module in qcnorm/ui/ with
one ``render()`` function and add one :class:`PageSpec` line to :data:`PAGES`. app.py
draws the navigation from this list and calls the chosen page's ``render()`` inside the
error boundary of :mod:`qcnorm.ui.common`, so every page gets the caution and the
kind error handling without writing them again.

Who sees a page (``access``): "any" — everyone (in team mode: once signed in); "signin" —
only in team mode while nobody is signed in; "audit" — supervisors and administrators
(and the one user of single-user mode); "accounts" — administrators in team mode. In
team mode nobody sees anything but the sign-in page before signing in
(:func:`page_keys`, used by app.py; :func:`allowed` is checked again by the page boundary).
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

__all__ = ["PageSpec", "PAGES", "page", "page_keys", "allowed", "home"]


@dataclass(frozen=True, slots=True)
class PageSpec:
    key: str          # stable id kept in session state (qc_page) and used by tests
    title: str        # label in the navigation
    module: str       # module in qcnorm.ui with a render() function
    help: str = ""    # one line under the title
    needs_data: bool = True  # shows "load data first" when nothing is loaded
    access: str = "any"      # "any" | "signin" | "audit" | "accounts" (see the module docstring)

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
    PageSpec("audit", "Audit trail", "audit_page", "Sign-ins, account changes, saves, baselines and decisions",
             needs_data=False, access="audit"),
    PageSpec("accounts", "Accounts", "accounts_page", "Add people, set their role, disable or unlock accounts",
             needs_data=False, access="accounts"),
    PageSpec("signin", "Sign in", "signin_page", "This history database has accounts: sign in to work with it",
             needs_data=False, access="signin"),
)


def allowed(spec: PageSpec, ctx: Any = None) -> bool:
    """May this page be shown in this mode to this user (``ctx``: :class:`qcnorm.ui.auth.Context`)?"""
    team = ctx is not None and ctx.team
    user = None if ctx is None else ctx.user
    if spec.access == "signin":
        return team and user is None
    if team and user is None:
        return False
    if spec.access == "audit":
        return not team or user.role in ("supervisor", "administrator")
    if spec.access == "accounts":
        return team and user.role == "administrator"
    return True


def page_keys(ctx: Any = None) -> list[str]:
    """Keys of the pages shown in the navigation (all but sign-in/accounts without ``ctx``)."""
    return [p.key for p in PAGES if allowed(p, ctx)]


def home(ctx: Any = None) -> str:
    """The page to show when the chosen one is not allowed: sign-in, else the first allowed."""
    keys = page_keys(ctx)
    return keys[0] if keys else "signin"


def page(key: str) -> PageSpec:
    for p in PAGES:
        if p.key == key:
            return p
    return PAGES[0]
