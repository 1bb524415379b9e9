"""Write the golden CLI outputs of the demo analysis: tests/data/golden/*.json.

Usage (from the repository root)::

    PYTHONPATH=$PWD .venv/bin/python tests/make_golden.py          # rewrite every file
    PYTHONPATH=$PWD .venv/bin/python tests/make_golden.py --check  # only compare, exit 1 on a difference

One case per demo characteristic (the rows of ``demo_data/line3_spool_specs.csv``) and
demo file: the wide file (with its subgroup column), the long file (``--characteristic``)
and the last-shift file, each run as ``python -m qcnorm analyze ... --json`` with the
limits, target and required index of the specs file, exactly as README.md shows the
command. ``tests/test_golden.py`` runs the same cases and compares the JSON with the
stored files (the version field left out, floats to a relative 1e-9).

The golden files pin today's numbers so that a restructuring cannot change them by
accident. When a change is *meant* to change the analysis, regenerate them with the
command above and review the diff (``git diff tests/data/golden``) before committing.
"""

from __future__ import annotations

import csv
import json
import math
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data"
GOLDEN = ROOT / "tests" / "data" / "golden"
#: Fields left out of the comparison (they change with every release, not with the numbers).
IGNORED_KEYS = frozenset({"qcnorm_version"})
REL_TOL = 1e-9


def _specs() -> list[dict[str, str]]:
    with open(DEMO / "line3_spool_specs.csv", newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def cases() -> dict[str, list[str]]:
    """{golden file stem: the CLI arguments after ``python -m qcnorm``}."""
    out: dict[str, list[str]] = {}
    for spec in _specs():
        name = spec["characteristic"]
        limits: list[str] = []
        for key, flag in (("lsl", "--lsl"), ("usl", "--usl"), ("target", "--target"),
                          ("required_index", "--required-index")):
            if spec[key].strip():
                limits += [flag, spec[key].strip()]
        out[f"wide_{name}"] = ["analyze", str(DEMO / "line3_spool_wide.csv"), "--column", name,
                               "--subgroup", "Subgroup", *limits, "--json"]
        out[f"long_{name}"] = ["analyze", str(DEMO / "line3_spool_long.csv"), "--characteristic", name,
                               "--subgroup", "Subgroup", *limits, "--json"]
        out[f"last_shift_{name}"] = ["analyze", str(DEMO / "line3_spool_last_shift.csv"), "--column", name,
                                     *limits, "--json"]
    return out


def run_case(args: list[str]) -> Any:
    """Run the CLI in a fresh process (as a user would) and parse its JSON."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    p = subprocess.run([sys.executable, "-m", "qcnorm", *args], capture_output=True, text=True,
                       cwd=ROOT, env=env, check=False)
    if p.returncode != 0:
        raise RuntimeError(f"qcnorm {' '.join(args)} exited {p.returncode}: {p.stderr.strip()}")
    return json.loads(p.stdout)


def strip_ignored(obj: Any) -> Any:
    if isinstance(obj, dict):
        return {k: strip_ignored(v) for k, v in obj.items() if k not in IGNORED_KEYS}
    if isinstance(obj, list):
        return [strip_ignored(v) for v in obj]
    return obj


def differences(expected: Any, actual: Any, path: str = "$", rel_tol: float = REL_TOL) -> list[str]:
    """Every place where ``actual`` differs from ``expected``: floats to ``rel_tol``, the rest exactly."""
    if isinstance(expected, bool) or isinstance(actual, bool):
        return [] if expected is actual else [f"{path}: {expected!r} != {actual!r}"]
    if isinstance(expected, (int, float)) and isinstance(actual, (int, float)):
        if isinstance(expected, int) and isinstance(actual, int):
            return [] if expected == actual else [f"{path}: {expected!r} != {actual!r}"]
        if math.isclose(float(expected), float(actual), rel_tol=rel_tol, abs_tol=0.0):
            return []
        return [f"{path}: {expected!r} != {actual!r} (rel. tolerance {rel_tol:g})"]
    if type(expected) is not type(actual):
        return [f"{path}: {type(expected).__name__} {expected!r} != {type(actual).__name__} {actual!r}"]
    if isinstance(expected, dict):
        out = [f"{path}: key {k!r} missing" for k in expected if k not in actual]
        out += [f"{path}: key {k!r} not expected" for k in actual if k not in expected]
        for k in expected:
            if k in actual:
                out += differences(expected[k], actual[k], f"{path}.{k}", rel_tol)
        return out
    if isinstance(expected, list):
        if len(expected) != len(actual):
            return [f"{path}: {len(expected)} items != {len(actual)} items"]
        out = []
        for i, (e, a) in enumerate(zip(expected, actual)):
            out += differences(e, a, f"{path}[{i}]", rel_tol)
        return out
    return [] if expected == actual else [f"{path}: {expected!r} != {actual!r}"]


def main(argv: list[str]) -> int:
    check = "--check" in argv
    GOLDEN.mkdir(parents=True, exist_ok=True)
    bad = 0
    for stem, args in cases().items():
        got = strip_ignored(run_case(args))
        path = GOLDEN / f"{stem}.json"
        if check:
            diff = differences(json.loads(path.read_text(encoding="utf-8")), got)
            bad += bool(diff)
            print(f"{stem}: {'OK' if not diff else f'{len(diff)} difference(s), first: {diff[0]}'}")
        else:
            path.write_text(json.dumps(got, indent=2, sort_keys=True, ensure_ascii=False) + "\n", encoding="utf-8")
            print(f"wrote {path.relative_to(ROOT)}")
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
