"""One exception tree and one warning tree for qcnorm.

Every problem a user can cause is a :class:`QcnormError` (a ``ValueError``) whose
message says what is wrong, where (rows, column, parameter) and what to do next.
The app and the CLI catch this one base and show the message; anything else that
escapes is a bug in qcnorm.

::

    ValueError
     └── QcnormError                 base of every user-facing error
          ├── DataError              the numbers themselves (too few, non-finite, constant)
          │    └── DomainError       values outside a transform's domain (e.g. <= 0 for log)
          ├── NotFittedError         a transform used before fit()
          ├── ReadError              a file or pasted text that cannot be read as measurements
          ├── ConfigError            an option with an unknown or inconsistent value
          ├── StoreError             the history database cannot be read or written
          └── AuthError              sign-in refused (wrong password, locked, disabled)
               └── PermissionDenied  the signed-in account may not do this (role, same person)

    UserWarning
     └── QcnormWarning               soft problems (small n, coarse resolution, approximate p)

Soft problems are normally carried as plain-words strings in the ``warnings`` field of
result objects rather than raised; :class:`QcnormWarning` exists so that library users
who call lower-level functions can filter them with one ``warnings.filterwarnings``.
"""

from __future__ import annotations

__all__ = [
    "QcnormError",
    "DataError",
    "DomainError",
    "NotFittedError",
    "ReadError",
    "ConfigError",
    "StoreError",
    "AuthError",
    "PermissionDenied",
    "QcnormWarning",
]


class QcnormError(ValueError):
    """Base of every error a user can cause. The message is shown to the user as is."""


class DataError(QcnormError):
    """The measurement values cannot support the requested computation."""


class DomainError(DataError):
    """Values fall outside the domain of a transform or distribution."""


class NotFittedError(QcnormError):
    """A transform or model was used before ``fit`` was called."""


class ReadError(QcnormError):
    """A file, byte string or pasted text could not be read as measurements.

    The message is ``problem`` followed by ``hint``, the reader's own words for what to
    do next. ``hint_code`` is a short stable key of that hint (the table of codes is
    ``qcnorm.io.hints.HINTS``) and ``hint_args`` the values its wording uses, so that the
    CLI and the app can say the same thing in the words of their own controls (a flag, a
    box to tick) without matching phrases of the message. A ReadError made without a
    hint has ``hint_code``/``hint`` None and ``problem`` equal to the message.
    """

    def __init__(self, message: str, *, hint_code: str | None = None, hint: str | None = None,
                 hint_args: dict | None = None) -> None:
        self.problem = str(message)
        self.hint_code = hint_code
        self.hint = hint
        self.hint_args = dict(hint_args or {})
        super().__init__(self.problem + (f" {hint}" if hint else ""))

    def __reduce__(self):  # keep the hint fields across processes (batch workers)
        return _rebuild_read_error, (type(self), self.problem, self.hint_code, self.hint, self.hint_args)


def _rebuild_read_error(cls: type, problem: str, hint_code: str | None, hint: str | None,
                        hint_args: dict) -> ReadError:
    return cls(problem, hint_code=hint_code, hint=hint, hint_args=hint_args)


class ConfigError(QcnormError):
    """An option has an unknown or inconsistent value."""


class StoreError(QcnormError):
    """The history database could not be read or written."""


class AuthError(QcnormError):
    """A sign-in or signature was refused: wrong password, locked or disabled account."""


class PermissionDenied(AuthError):
    """The acting account may not do this; the message says who may."""


class QcnormWarning(UserWarning):
    """Base of every warning qcnorm emits."""
