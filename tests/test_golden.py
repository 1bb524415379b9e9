"""The CLI JSON of the demo analysis is unchanged (tests/data/golden, see tests/make_golden.py).

The expected values are qcnorm's own earlier outputs, not an external source: this test
guards against *accidental* change (a restructuring must not move a number). The numbers
themselves are checked against published sources and scipy/statsmodels in the other test
files. When a change is meant to alter the analysis, regenerate the files with
``PYTHONPATH=$PWD .venv/bin/python tests/make_golden.py`` and review the diff.
"""

from __future__ import annotations

import contextlib
import importlib.util
import io
import json
from pathlib import Path

import pytest

from qcnorm.cli import main

_spec = importlib.util.spec_from_file_location("make_golden", Path(__file__).with_name("make_golden.py"))
make_golden = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_golden)

CASES = make_golden.cases()


def test_every_demo_characteristic_has_a_golden_file():
    stored = {p.stem for p in make_golden.GOLDEN.glob("*.json")}
    assert stored == set(CASES), "run tests/make_golden.py to add or remove golden files"
    assert len(CASES) == 3 * 6  # three demo files × six characteristics of line3_spool_specs.csv


@pytest.mark.parametrize("stem", sorted(CASES))
def test_cli_json_matches_golden(stem):
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        rc = main(CASES[stem])
    assert rc == 0
    got = make_golden.strip_ignored(json.loads(out.getvalue()))
    expected = json.loads((make_golden.GOLDEN / f"{stem}.json").read_text(encoding="utf-8"))
    diff = make_golden.differences(expected, got)
    assert not diff, f"{len(diff)} difference(s) from tests/data/golden/{stem}.json:\n" + "\n".join(diff[:20])


def test_comparison_catches_a_changed_number_and_ignores_the_version():
    a = {"qcnorm_version": "1", "cpk": 1.2345678901, "n": 900, "name": "Ra"}
    assert make_golden.differences(make_golden.strip_ignored(a),
                                   make_golden.strip_ignored({**a, "qcnorm_version": "2"})) == []
    assert make_golden.differences(a, {**a, "cpk": 1.2345678901 * (1 + 1e-12)}) == []
    assert make_golden.differences(a, {**a, "cpk": 1.2345679}) != []
    assert make_golden.differences(a, {**a, "n": 901}) != []
    assert make_golden.differences(a, {**a, "name": "Rz"}) != []
    assert make_golden.differences([1.0, 2.0], [1.0]) != []
