"""qcnorm: transforms, control limits and capability for non-normal QC data.

The public face of the package. Importing qcnorm never imports streamlit.
"""

from __future__ import annotations

from .errors import (
    ConfigError,
    DataError,
    DomainError,
    NotFittedError,
    QcnormError,
    QcnormWarning,
    ReadError,
    StoreError,
)

__version__ = "0.1.0"

__all__ = [
    "__version__",
    "QcnormError",
    "DataError",
    "DomainError",
    "NotFittedError",
    "ReadError",
    "ConfigError",
    "StoreError",
    "QcnormWarning",
]
