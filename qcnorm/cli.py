"""Command-line interface (filled in by the analysis work)."""

from __future__ import annotations


def main(argv: list[str] | None = None) -> int:
    return 0
