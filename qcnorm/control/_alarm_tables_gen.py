"""Regenerate ``qcnorm/control/_alarm_tables.py`` from the Markov chains of false_alarm.py.

Run from the repository root: ``python -m qcnorm.control._alarm_tables_gen``. The floats
are written with ``repr`` (exact round trip), so the tables hold exactly what the chains
compute on the machine that ran this.
"""

from __future__ import annotations

from pathlib import Path

from . import false_alarm as fa

_HEADER = '''"""Precomputed in-control survival of the control-chart rules (generated: do not edit).

S(t) = P(no false signal in t points), t = 0 … 400, from the Markov chains of
:mod:`qcnorm.control.false_alarm` (``_zone_survival_computed``, ``_mr_survival_computed``).
Computing them costs 0.1–0.4 s of CPU at the first chart of a process (every CLI call and
batch worker); reading them costs nothing. tests/test_false_alarm_tables.py recomputes
every table and compares. Regenerate with ``python -m qcnorm.control._alarm_tables_gen``
after changing a chain.
"""

# fmt: off
ZONE_SURVIVAL: dict[str, tuple[float, ...]] = {}
MR_SURVIVAL: dict[tuple[float, float, int], tuple[float, ...]] = {}
'''


def _fmt(values) -> str:
    lines, cur = [], "    "
    for v in (repr(float(x)) for x in values):
        if len(cur) + len(v) + 2 > 96:
            lines.append(cur.rstrip())
            cur = "    "
        cur += v + ", "
    lines.append(cur.rstrip())
    return "(\n" + "\n".join(lines) + "\n)"


def render() -> str:
    """The text of ``_alarm_tables.py``."""
    parts = [_HEADER]
    for rules in fa.ALARM_TABLE_ZONE_RULES:
        surv, _ = fa._zone_survival_computed(rules)
        parts.append(f"ZONE_SURVIVAL[{rules!r}] = {_fmt(surv)}\n")
    for key in fa.alarm_table_mr_keys():
        surv, _ = fa._mr_survival_computed(*key)
        parts.append(f"MR_SURVIVAL[{key!r}] = {_fmt(surv)}\n")
    return "\n".join(parts)


if __name__ == "__main__":
    Path(__file__).with_name("_alarm_tables.py").write_text(render(), encoding="utf-8")
