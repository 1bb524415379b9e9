"""Structured hints on read errors (qcnorm.io.hints): every ReadError of the readers says
what to do next under a stable code, and the CLI and the app word that code their own way.

These are checks of our own contract (no statistics): the expected codes follow from the
inputs in tests/data/messy (see EXPECTED.md there).
"""

from __future__ import annotations

import pickle
import re
from pathlib import Path

import pytest

from qcnorm import cli
from qcnorm.errors import QcnormError, ReadError
from qcnorm.io import read_measurements
from qcnorm.io.hints import HINTS, hint_text, read_error

MESSY = Path(__file__).parent / "data" / "messy"
IO_SOURCES = "\n".join(p.read_text(encoding="utf-8") for p in (Path(cli.__file__).parent / "io").glob("*.py")
                       if p.name != "hints.py")

BAD_INPUTS = [
    # (source, options, expected hint code)
    (MESSY / "no_such_file.csv", {}, "source.no_file"),
    (MESSY, {}, "source.folder"),
    (b"   ", {}, "source.empty"),
    (MESSY / "image.png", {}, "source.not_a_table"),
    (MESSY / "legacy.xls", {}, "source.save_as"),
    (MESSY / "header_only.csv", {}, "table.no_rows"),
    (MESSY / "long_format.csv", {}, "characteristic.choose"),
    (MESSY / "long_format.csv", {"characteristic": "Nope"}, "characteristic.unknown"),
    (MESSY / "wide_format.csv", {}, "column.choose"),
    (MESSY / "wide_format.csv", {"column": "Nope"}, "column.unknown"),
    (MESSY / "wide_format.csv", {"column": 99}, "column.index"),
    (MESSY / "wide_format.csv", {"characteristic": "Ra"}, "characteristic.not_long"),
    (MESSY / "title_two_sheets.xlsx", {"sheet": "Nope"}, "sheet.choose"),
    (MESSY / "title_two_sheets.xlsx", {"sheet": 9}, "sheet.index"),
    (12345, {}, "source.unsupported"),
    ("1\n2\n3\n", {"max_bytes": 2}, "source.too_large"),
]


@pytest.mark.parametrize(("source", "options", "code"), BAD_INPUTS,
                         ids=[f"{c}-{i}" for i, (_, _, c) in enumerate(BAD_INPUTS)])
def test_read_errors_carry_their_hint_code(source, options, code):
    with pytest.raises(ReadError) as info:
        read_measurements(source, **options)
    exc = info.value
    assert exc.hint_code == code
    assert exc.hint == hint_text(code, **exc.hint_args)
    assert str(exc) == f"{exc.problem} {exc.hint}"
    assert exc.hint not in exc.problem


def test_every_hint_code_is_used_by_the_readers_and_formats():
    for code, text in HINTS.items():
        assert f'"{code}"' in IO_SOURCES or f"'{code}'" in IO_SOURCES, f"hint {code!r} is never given"
        fields = set(re.findall(r"{(\w+)}", text))
        hint_text(code, **{f: "x" for f in fields})  # formats with exactly its fields


def test_read_error_without_hint_is_its_message_and_survives_pickling():
    plain = ReadError("Something is wrong.")
    assert (plain.problem, plain.hint_code, plain.hint, str(plain)) == ("Something is wrong.", None, None,
                                                                        "Something is wrong.")
    exc = read_error("No column named 'x'.", "column.unknown", param="column")
    back = pickle.loads(pickle.dumps(exc))
    assert type(back) is ReadError and isinstance(back, QcnormError)
    assert (back.problem, back.hint_code, back.hint, back.hint_args, str(back)) == (
        exc.problem, exc.hint_code, exc.hint, exc.hint_args, str(exc))


def test_front_end_words_name_known_codes_with_their_fields():
    from qcnorm.ui import common

    for table in (cli._CLI_WORDS, common._APP_WORDS):
        assert set(table) <= set(HINTS)
    for code, words in cli._CLI_WORDS.items():
        fields = set(re.findall(r"{(\w+)}", words)) - {"flag"}
        assert fields <= set(re.findall(r"{(\w+)}", HINTS[code])), code
        assert not re.search(r"\b(column|characteristic|sheet|subgroup|include_censored)=", words), code


@pytest.mark.parametrize(("options", "expected"), [
    ({"column": "Nope"}, "as --column."),
    ({}, "Choose one with --column"),
    ({"characteristic": "Ra"}, "with --column."),
])
def test_cli_says_flags_for_hint_codes(options, expected):
    with pytest.raises(ReadError) as info:
        read_measurements(MESSY / "wide_format.csv", **options)
    text = cli._in_cli_words(info.value)
    assert expected in text
    assert not re.search(r"\b(column|characteristic|sheet)=", text), text
    assert text.startswith(info.value.problem.split("=")[0].replace("characteristic", "--characteristic"))


def test_cli_and_app_word_hints_inside_other_messages():
    """Hints quoted inside a message that is not a ReadError (reasons of excluded rows)."""
    from qcnorm.ui import common

    reason = f"censored value '<0.05' (below 0.05); censored values are excluded by default " \
             f"{hint_text('censored.include_short')}"
    message = QcnormError(f"Only 3 usable value(s); row 3: {reason}.")
    assert "(--include-censored uses the limit)" in cli._in_cli_words(message)
    assert "(tick 'Use censored values' to use the limit)" in common.error_words(message)


def test_app_words_the_sheet_hint_as_its_control():
    from qcnorm.ui import common

    with pytest.raises(ReadError) as info:
        read_measurements(MESSY / "title_two_sheets.xlsx", sheet="Nope")
    shown = common.error_words(info.value)
    assert shown.startswith(info.value.problem) and shown.endswith("Choose one of these under 'Sheet'.")
    assert "sheet=" not in shown
