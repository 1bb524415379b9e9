"""Cell cleaning: numbers in either decimal mark, thousands groups, missing marks, spreadsheet
errors and censored values ("<0.05", "ND"); the file-wide choice of the decimal mark."""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections import Counter
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .hints import hint_text
from ._common import _cell_text, _norm_key, _quote

_MISSING_MARKS = {
    "n/a", "na", "n.a.", "n.a", "nan", "null", "none", "-", "--", "---", "—", "–", "?",
    "missing", "#n/a", "n/v", "k.a.", "#na",
}


_SHEET_ERRORS = {"#DIV/0!", "#VALUE!", "#REF!", "#NUM!", "#NAME?", "#NULL!", "#N/A", "#SPILL!", "#CALC!"}


# Censoring marks without a number. Below a detection/quantitation limit:
_BELOW_MARKS = {
    "nd", "n.d.", "n.d", "not detected", "bdl", "bld", "blq", "bql", "lod", "loq", "<lod",
    "<loq", "below lod", "below loq", "below detection limit", "< dl", "<dl", "<mdl", "<rl",
}


_ABOVE_MARKS = {"over range", "above range", "overrange", "tntc", ">uloq", "> uloq"}


_LIMIT_WORDS = {"lod", "loq", "dl", "mdl", "lloq", "uloq", "rl", "pql", "mrl", "lol", "ql", "detection limit"}


_NUMBERISH = re.compile(r"^[+\-\u2212]?[\d.,'\s\u00a0\u202f\u2009]*\d[\d.,'\s\u00a0\u202f\u2009]*(?:[eE][+-]?\d+)?$")


_SPACE_GROUP = " \u00a0\u202f\u2009'"


def _clean_sign(s: str) -> tuple[str, str]:
    s = s.replace("\u2212", "-")
    if s[:1] in "+-":
        return s[0], s[1:].lstrip()
    return "", s


@dataclass
class _Evidence:
    dot_dec: int = 0
    comma_dec: int = 0
    dot_ambiguous: int = 0
    comma_ambiguous: int = 0
    thousands: Counter = field(default_factory=Counter)
    example_ambiguous: str = ""
    example_dot: str = ""
    example_comma: str = ""

    def add(self, raw: str) -> None:
        s = raw.strip()
        if not s or not _NUMBERISH.match(s):
            return
        _, s = _clean_sign(s)
        s = re.split(r"[eE]", s)[0]
        if not s or s.isdigit():
            return
        has_dot, has_comma = "." in s, "," in s
        m = re.fullmatch(r"\d{1,3}(?P<t>[ \u00a0\u202f\u2009'])\d{3}(?:(?P=t)\d{3})*(?P<d>[.,]\d*)?", s)
        if m:
            self.thousands[m.group("t")] += 1
            if m.group("d"):
                self._vote(m.group("d")[0], raw)
            return
        if has_dot and has_comma:
            if re.fullmatch(r"\d{1,3}(?:,\d{3})+\.\d*", s):
                self._vote(".", raw)
                self.thousands[","] += 1
            elif re.fullmatch(r"\d{1,3}(?:\.\d{3})+,\d*", s):
                self._vote(",", raw)
                self.thousands["."] += 1
            return
        for ch in ".,":
            if ch not in s:
                continue
            n = s.count(ch)
            esc = re.escape(ch)
            if n == 1:
                if re.fullmatch(rf"[1-9]\d{{0,2}}{esc}\d{{3}}", s):
                    if ch == ".":
                        self.dot_ambiguous += 1
                    else:
                        self.comma_ambiguous += 1
                    self.example_ambiguous = self.example_ambiguous or raw.strip()
                elif re.fullmatch(rf"\d*{esc}\d+|\d+{esc}", s):
                    self._vote(ch, raw)
            elif re.fullmatch(rf"\d{{1,3}}(?:{esc}\d{{3}})+", s):
                # "1.234.567": the repeated character groups thousands, so the other decimal.
                self._vote("," if ch == "." else ".", raw)
                self.thousands[ch] += 1

    def _vote(self, ch: str, raw: str) -> None:
        if ch == ".":
            self.dot_dec += 1
            self.example_dot = self.example_dot or raw.strip()
        else:
            self.comma_dec += 1
            self.example_comma = self.example_comma or raw.strip()


class _NumberFormat:
    """Parses cell text with one decimal character and the allowed group separators."""

    def __init__(self, decimal: str):
        self.decimal = decimal
        other = "," if decimal == "." else "."
        seps = re.escape(other) + re.escape(_SPACE_GROUP)
        d = re.escape(decimal)
        self._rx = re.compile(
            rf"(?:(?P<g>\d{{1,3}}(?P<t>[{seps}])\d{{3}}(?:(?P=t)\d{{3}})*(?:{d}\d*)?)"
            rf"|(?P<p>\d+(?:{d}\d*)?|{d}\d+))(?P<e>[eE][+-]?\d+)?"
        )

    def parse(self, text: str) -> float | None:
        """The number in ``text``, or None when it is not a number in this format."""
        sign, s = _clean_sign(text.strip())
        m = self._rx.fullmatch(s)
        if not m:
            return None
        body = m.group("g") or m.group("p")
        if m.group("t"):
            body = body.replace(m.group("t"), "")
        body = body.replace(self.decimal, ".")
        return float(sign + body + (m.group("e") or ""))


_CENSOR_OP = re.compile(r"^(<=|>=|<|>|≤|≥|=<|=>)\s*(.*)$")


@dataclass(frozen=True, slots=True)
class _Cell:
    kind: str  # number | blank | missing | censored | invalid
    value: float = math.nan
    reason: str = ""
    censor_kind: str = ""
    numberish: bool = False


_BLANK = _Cell("blank", reason="empty cell")


class _Classifier:
    """Classifies cells (text or spreadsheet values) with a cache of distinct texts."""

    def __init__(self, fmt: _NumberFormat):
        self.fmt = fmt
        self._cache: dict[str, _Cell] = {}

    def __call__(self, v: Any) -> _Cell:
        if isinstance(v, str):
            c = self._cache.get(v)
            if c is None:
                c = self._text(v)
                if len(self._cache) < 200_000:
                    self._cache[v] = c
            return c
        if v is None:
            return _BLANK
        if isinstance(v, (bool, np.bool_)):
            return _Cell("invalid", reason=f"{_cell_text(v)} is a true/false value, not a number")
        if isinstance(v, (int, float, np.integer, np.floating)):
            f = float(v)
            if math.isnan(f):
                return _BLANK
            if not math.isfinite(f):
                return _Cell("invalid", reason="infinite value", numberish=True)
            return _Cell("number", f)
        if isinstance(v, (_dt.date, _dt.time, _dt.datetime, pd.Timestamp)):
            return _Cell("invalid", reason=f"a date/time ({_cell_text(v)}), not a number")
        return self(_cell_text(v))

    def _text(self, raw: str) -> _Cell:
        s = raw.strip()
        if not s:
            return _BLANK
        low = s.casefold()
        if low in _BELOW_MARKS:
            return _Cell("censored", reason=f"censored value {_quote(s)} (below a limit, no number given)",
                         censor_kind="below")
        if low in _ABOVE_MARKS:
            return _Cell("censored", reason=f"censored value {_quote(s)} (above a limit, no number given)",
                         censor_kind="above")
        if low in _MISSING_MARKS:
            return _Cell("missing", reason=f"marked as missing ({_quote(s)})")
        if s.upper() in _SHEET_ERRORS:
            return _Cell("missing", reason=f"spreadsheet error {_quote(s)}")
        m = _CENSOR_OP.match(s)
        if m:
            kind = "below" if m.group(1) in ("<", "<=", "≤", "=<") else "above"
            rest = m.group(2).strip()
            limit = self.fmt.parse(rest) if rest else None
            if limit is not None and math.isfinite(limit):
                return _Cell("censored", limit, f"censored value {_quote(s)} ({kind} {limit:g})",
                             censor_kind=kind)
            if _norm_key(rest) in {_norm_key(w) for w in _LIMIT_WORDS}:
                return _Cell("censored", reason=f"censored value {_quote(s)} ({kind} a limit, no number given)",
                             censor_kind=kind)
        try:
            value = self.fmt.parse(s)
        except (ValueError, OverflowError):  # pragma: no cover - the regex admits only numbers
            value = None
        if value is not None:
            if not math.isfinite(value):
                return _Cell("invalid", reason=f"{_quote(s)} is too large (overflows to infinity)",
                             numberish=True)
            return _Cell("number", value)
        if _NUMBERISH.match(s):
            point = "decimal comma" if self.fmt.decimal == "," else "decimal point"
            return _Cell("invalid", reason=f"{_quote(s)} is not a valid number in this file's format ({point})",
                         numberish=True)
        return _Cell("invalid", reason=f"not a number ({_quote(s)})")


def _choose_decimal(evidence: _Evidence, delimiter: str | None, forced: str | None) -> tuple[str, list[str], list[str]]:
    """Decide the decimal character from the file-wide evidence; return notes and warnings."""
    notes: list[str] = []
    warns: list[str] = []
    dot = evidence.dot_dec
    comma = evidence.comma_dec
    if forced is not None:
        if forced == "." and comma:
            warns.append(f"decimal='.' was given but {comma} cell(s) look like decimal commas "
                         f"(e.g. {_quote(evidence.example_comma)}); such cells are excluded.")
        if forced == "," and dot:
            warns.append(f"decimal=',' was given but {dot} cell(s) look like decimal points "
                         f"(e.g. {_quote(evidence.example_dot)}); such cells are excluded.")
        return forced, notes, warns
    if dot and comma:
        decimal = "." if dot >= comma else ","
        loser, example = (comma, evidence.example_comma) if decimal == "." else (dot, evidence.example_dot)
        warns.append(
            f"The file mixes decimal points ({dot} cells, e.g. {_quote(evidence.example_dot)}) and decimal "
            f"commas ({comma} cells, e.g. {_quote(evidence.example_comma)}). The more common "
            f"{'point' if decimal == '.' else 'comma'} was used; the {loser} other cell(s) "
            f"such as {_quote(example)} are excluded. {hint_text('decimal.choose')}."
        )
        return decimal, notes, warns
    if dot:
        return ".", notes, warns
    if comma:
        return ",", notes, warns
    n_amb = evidence.dot_ambiguous + evidence.comma_ambiguous
    decimal = "," if delimiter == ";" else "."
    if n_amb:
        ex = evidence.example_ambiguous
        why = ("the file is semicolon-separated, as is usual where the comma is the decimal mark"
               if decimal == "," else "the decimal point is the default when nothing else decides")
        val = _NumberFormat(decimal).parse(ex)
        shown = f" ({ex} = {val:g})" if val is not None and math.isfinite(val) else ""
        notes.append(
            f"{n_amb} value(s) such as {_quote(ex)} could be read with either a decimal point or a "
            f"decimal comma; they were read with a decimal {'comma' if decimal == ',' else 'point'}"
            f"{shown} because {why}. {hint_text('decimal.other_way')}."
        )
    return decimal, notes, warns


_LOOSE_NUM = re.compile(r"^\s*[<>≤≥]?\s*[+\-\u2212]?[\d.,'\s]*\d[\d.,'\s]*(?:[eE][+-]?\d+)?\s*$")
