"""Compatibility module: the readers now live in the package :mod:`qcnorm.io`.

``from qcnorm.data import read_measurements`` and ``from qcnorm import data`` keep
working with the same public names (``__all__`` below is ``qcnorm.io.__all__``). New
code imports from :mod:`qcnorm.io`. A private name of the former single module
(``qcnorm.data._cell_text`` …) is still found, in the ``qcnorm.io`` module that now
holds it.
"""

from __future__ import annotations

import importlib
from typing import Any

from .io import (
    CensoredValue,
    CharacteristicInfo,
    ExcludedRow,
    IngestReport,
    Measurements,
    ParsedFile,
    RawTable,
    export_csv,
    export_xlsx,
    list_characteristics,
    parse_file,
    read_all,
    read_measurements,
    read_table,
    split_units,
)
from .io import __all__ as __all__  # noqa: F401  (the same public names)

_MODULES = ("_common", "names", "cleaning", "sources", "pasted", "text", "spreadsheet", "frame",
            "table", "layout", "ingest", "results", "readers", "export", "hints")


def __getattr__(name: str) -> Any:
    """A private name of the former ``qcnorm.data``, looked up in the ``qcnorm.io`` modules."""
    if name.startswith("_") and not name.startswith("__"):
        for mod in _MODULES:
            module = importlib.import_module(f".io.{mod}", __package__)
            if hasattr(module, name):
                return getattr(module, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
