"""Command-line interface: ``python -m qcnorm analyze FILE ...`` (and ``batch``; ``users``
and ``store verify`` live in ``cli_store.py``).

Exit codes (stable contract): 0 ok, 2 bad input (one clear message on stderr, no
traceback), 1 internal error (a short message; set QCNORM_DEBUG=1 for the traceback).
"""

from __future__ import annotations

import argparse
import json
import os
import re
import sys
import traceback
from collections.abc import Sequence
from typing import Any

from ._version import __version__
from .control import DEFAULT_RULES, RULE_SETS
from .errors import QcnormError, ReadError
from .io.hints import HINTS, hint_text

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2

from .caution import CAUTION  # noqa: E402  (re-exported for callers)


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as bad input (exit 2) in one line."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"qcnorm: error: {message}\n")
        raise SystemExit(EXIT_BAD_INPUT)


def _ppm(v) -> str:
    """ppm in the text summary: whole numbers with thousands separators from 100 up."""
    if v is None:
        return "—"
    v = float(v)
    return f"{v:,.0f}" if v >= 100 else f"{v:.3g}"


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="qcnorm", description="Transforms, control limits and capability for non-normal QC data.")
    p.add_argument("--version", action="version", version=f"qcnorm {__version__}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    a = sub.add_parser("analyze", help="analyse one characteristic of a measurement file")
    a.add_argument("file", help="CSV/TSV/XLSX file, or - for text on standard input")
    a.add_argument("--column", help="value column (name or 0-based index); in a long file the value column")
    a.add_argument("--characteristic", help="characteristic to pick in a long file")
    a.add_argument("--subgroup", help="column holding subgroup labels")
    a.add_argument("--sheet", help="XLSX sheet name")
    a.add_argument("--lsl", type=float)
    a.add_argument("--usl", type=float)
    a.add_argument("--target", type=float)
    a.add_argument("--required-index", type=float, default=1.33)
    a.add_argument("--transform", default="auto", choices=["auto", "none", "log", "boxcox", "yeojohnson", "johnson"])
    a.add_argument("--chart", default="auto", choices=["auto", "individuals", "xbar_r", "xbar_s"])
    a.add_argument("--rules", default=DEFAULT_RULES, choices=list(RULE_SETS),
                   help="run rules for the stability verdict (default %(default)s: a point beyond the limits)")
    a.add_argument("--exact-lambda", action="store_true",
                   help="use the maximum-likelihood Box–Cox λ as estimated (default: round it to "
                        "−1, −0.5, 0, 0.5, 1 or 2 when that value lies inside its 95 %% interval)")
    a.add_argument("--zeros", default="censor", choices=["censor", "exclude"],
                   help="readings of 0 that look rounded down by the gauge: 'censor' (default) fits them as "
                        "values between 0 and half the gauge step so log/Box–Cox stay candidates; "
                        "'exclude' keeps them as zeros (log/Box–Cox then not applicable)")
    a.add_argument("--include-censored", action="store_true",
                   help="use '<0.05'-style values at their limit instead of excluding them")
    a.add_argument("--json", action="store_true", help="print the analysis as JSON")
    a.add_argument("--pdf", metavar="OUT.pdf", help="also write the PDF summary")
    a.add_argument("--paper", default="A4", choices=["A4", "Letter"], help="paper size of the PDF")
    for flag, what in (("--plant", "plant"), ("--line", "production line"), ("--lot", "lot"),
                       ("--shift", "shift"), ("--operator", "operator")):
        a.add_argument(flag, help=f"{what}, printed in the PDF header (with --pdf)")
    a.add_argument("--date", metavar="YYYY-MM-DD",
                   help="ISO date (or date-time, 2026-11-25T22:00) of the shift, printed in the PDF header "
                        "and used as the PDF's creation date (with --pdf)")
    b = sub.add_parser("batch", help="analyse every characteristic of a wide or long file, or a folder of files")
    b.add_argument("file", help="CSV/TSV/XLSX file with one column per characteristic, a long file, "
                                "or a folder of CSV files (a characteristic's rows from all files together)")
    b.add_argument("--specs", metavar="SPECS.csv",
                   help="spec limits: columns characteristic, lsl, usl, target, required_index, units")
    b.add_argument("--subgroup", help="column holding subgroup labels (shared by all characteristics)")
    b.add_argument("--sheet", help="XLSX sheet name")
    b.add_argument("--out", metavar="summary.csv|.xlsx", help="write the ranked summary table")
    b.add_argument("--pdf-dir", metavar="DIR", help="write one PDF summary per characteristic")
    b.add_argument("--jobs", type=int, default=0, help="worker processes (0 = one per core, the default)")
    b.add_argument("--engine", default="auto", choices=["auto", "local", "pool", "dask"],
                   help="where the work runs: local (this process), pool (processes on this machine), dask "
                        "(the --scheduler cluster, or a cluster on this machine); auto: dask when a scheduler "
                        "is given, else pool")
    b.add_argument("--scheduler", metavar="ADDRESS",
                   help="Dask scheduler address, e.g. tcp://10.0.0.5:8786 (default: $QCNORM_SCHEDULER)")
    b.add_argument("--read", dest="read_mode", default="auto", choices=["auto", "whole", "chunked"],
                   help="read the file whole, or in chunks (large CSV files and folders); auto picks by size")
    b.add_argument("--chunk-rows", type=int, default=200_000, help="rows per chunk when reading in chunks")
    b.add_argument("--transform", default="auto", choices=["auto", "none", "log", "boxcox", "yeojohnson", "johnson"])
    b.add_argument("--chart", default="auto", choices=["auto", "individuals", "xbar_r", "xbar_s"])
    b.add_argument("--rules", default=DEFAULT_RULES, choices=list(RULE_SETS),
                   help="run rules for the stability verdict (default %(default)s: a point beyond the limits)")
    b.add_argument("--exact-lambda", action="store_true",
                   help="use the maximum-likelihood Box–Cox λ as estimated, never rounded")
    b.add_argument("--zeros", default="censor", choices=["censor", "exclude"],
                   help="readings of 0 below the gauge step: censored (default) or kept as zeros")
    b.add_argument("--json", action="store_true", help="print the summary rows as JSON")
    from .cli_store import add_parsers

    add_parsers(sub)
    return p


def _cmd_batch(args: argparse.Namespace) -> int:
    from .batch import run_batch
    from .io import export_csv, export_xlsx

    if not os.path.exists(args.file):
        raise QcnormError(f"File not found: {args.file}. Check the path and try again.")
    if args.chunk_rows < 1:
        raise QcnormError(f"--chunk-rows must be a whole number ≥ 1. Got {args.chunk_rows} instead.")
    if args.out and not args.out.lower().endswith((".csv", ".xlsx")):
        raise QcnormError(f"--out must end in .csv or .xlsx. Got {args.out!r} instead.")
    res = run_batch(
        args.file, specs=args.specs, subgroup=args.subgroup, sheet=args.sheet, jobs=args.jobs,
        pdf_dir=args.pdf_dir, progress=sys.stderr.isatty(), transform=args.transform,
        chart=args.chart, rules=args.rules, round_lambda=not args.exact_lambda, zeros=args.zeros,
        engine=args.engine, scheduler=args.scheduler, read_mode=args.read_mode, chunk_rows=args.chunk_rows,
    )
    df = res.frame()
    if args.out:
        data = export_xlsx(df, sheet_name="summary") if args.out.lower().endswith(".xlsx") else export_csv(df)
        try:
            with open(args.out, "wb") as fh:
                fh.write(data)
        except OSError as exc:
            raise QcnormError(f"Cannot write {args.out}: {exc.strerror}. Choose another folder or file name.") from None
    if args.json:
        sys.stdout.write(json.dumps([r.to_dict() for r in res.rows], indent=2, allow_nan=False) + "\n")
        return EXIT_OK
    cols = ["rank", "characteristic", "n", "transform", "in_control", "cpk", "cpk_lower", "ppk",
            "ppk_lower", "ppm_overall", "verdict"]
    shown = df[cols].copy()
    for c in ("cpk", "cpk_lower", "ppk", "ppk_lower"):
        shown[c] = shown[c].map(lambda v: "—" if v is None or v != v else f"{v:.2f}")
    shown["ppm_overall"] = shown["ppm_overall"].map(lambda v: "—" if v is None or v != v else f"{v:,.0f}")
    sys.stdout.write(shown.to_string(index=False) + "\n")
    for r in res.rows:
        if r.error:
            sys.stdout.write(f"! {r.characteristic}: {r.error}\n")
    sys.stdout.write(
        f"{len(res.rows)} characteristic(s) in {res.seconds:.1f} s with {res.jobs} worker(s) ({res.engine}); "
        f"{res.n_failed} could not be analysed. Ranked worst first by the lower confidence bound of "
        "min(Cpk, Ppk).\n"
    )
    if args.out:
        sys.stdout.write(f"Summary written to {args.out}\n")
    sys.stdout.write(CAUTION + "\n")
    return EXIT_OK


def _read(args: argparse.Namespace):
    from .io import read_measurements

    source: Any = args.file
    if args.file == "-":
        source = sys.stdin.read()
        if "\n" not in source and "\t" not in source:
            source += "\n"
    elif not os.path.exists(args.file):
        raise QcnormError(f"File not found: {args.file}. Check the path and try again.")
    return read_measurements(
        source, column=args.column, subgroup=args.subgroup, characteristic=args.characteristic,
        sheet=args.sheet, include_censored=args.include_censored,
    )


def _fmt(v: Any, digits: int = 4) -> str:
    if v is None:
        return "—"
    if isinstance(v, float):
        return f"{v:.{digits}g}"
    return str(v)


def text_summary(d: dict[str, Any]) -> str:
    """A readable summary of an Analysis dict (the JSON contract)."""
    lines: list[str] = []
    name = d.get("characteristic") or "values"
    units = f" [{d['units']}]" if d.get("units") else ""
    lines.append(f"qcnorm {d.get('qcnorm_version')} — {name}{units}, n = {d['n']}")
    t = d["transform"]
    lines.append(f"Transform: {t['name']} {json.dumps(t['params'])}")
    lines.append(f"  why: {t['reason']}")
    nr, nt = d["normality"]["raw"], d["normality"]["transformed"]
    lines.append(
        f"Normality (Anderson–Darling p): before {_fmt(nr['ad_p_value'])}, after {_fmt(nt['ad_p_value'])}; "
        f"skewness before {_fmt(nr['skewness'], 3)}, after {_fmt(nt['skewness'], 3)}"
    )
    c = d["control"]
    u = c["units"]
    lines.append(
        f"Control chart ({c['chart']}, phase {c['phase']}): center {_fmt(u['center'])}, "
        f"LCL {_fmt(u['lcl'])}, UCL {_fmt(u['ucl'])}{units}"
    )
    for note in (u.get("lcl_note"), u.get("ucl_note")):
        if note:
            lines.append(f"  {note}")
    if c["violations"]:
        lines.append(f"  {len(c['violations'])} rule violation(s):")
        for v in c["violations"][:20]:
            lines.append(f"   - point {v['index'] + 1}: {v['rule']} {v.get('description', '')}")
        if len(c["violations"]) > 20:
            lines.append(f"   … and {len(c['violations']) - 20} more (see --json)")
    else:
        lines.append("  no rule violations: in statistical control")
    cap = d["capability"]
    if cap.get("verdict") != "not_assessed" and (cap.get("lsl") is not None or cap.get("usl") is not None):
        def ci(k: str) -> str:
            iv = cap.get(k)
            return "" if not iv else f" ({_fmt(iv.get('low'), 3)} to {_fmt(iv.get('high'), 3)})"
        lines.append(
            f"Capability: Cp {_fmt(cap.get('cp'), 3)}{ci('cp_ci')}, Cpk {_fmt(cap.get('cpk'), 3)}{ci('cpk_ci')}, "
            f"Pp {_fmt(cap.get('pp'), 3)}{ci('pp_ci')}, Ppk {_fmt(cap.get('ppk'), 3)}{ci('ppk_ci')}, "
            f"Cpm {_fmt(cap.get('cpm'), 3)}"
        )
        lines.append(
            f"  expected ppm within {_fmt(cap.get('ppm_within'), 3)}, overall {_fmt(cap.get('ppm_overall'), 3)}; "
            f"observed {_fmt(cap.get('ppm_observed'), 3)}"
        )
        p = cap.get("percentile") or {}
        if p.get("distribution"):
            lines.append(
                f"  percentile method ({p['distribution']}): Pp {_fmt(p.get('pp'), 3)}, Ppk {_fmt(p.get('ppk'), 3)}"
            )
        mr = cap.get("model_range") or {}
        if mr.get("models"):
            lines.append(f"  across models: {mr.get('summary_text') or ''}".rstrip())
            for m in mr["models"]:
                flag = ", bound near limit" if m.get("bound_near_limit") else ""
                lines.append(
                    f"   - {m['model']}{' (chosen)' if m.get('chosen') else ''} [{m['route']}]: "
                    f"ppm {_ppm(m.get('ppm'))}, Ppk {_fmt(m.get('ppk'), 3)}, "
                    f"{'adequate' if m.get('adequate') else 'not adequate'}{flag}; alone: {m.get('verdict')}"
                )
            if mr.get("verdict_basis") and mr["verdict_basis"] not in (cap.get("verdict_text") or ""):
                lines.append(f"  {mr['verdict_basis']}")
        lines.append(f"  verdict: {cap.get('verdict_text') or cap.get('verdict')}")
    else:
        lines.append("Capability: not assessed (no spec limits given; use --lsl/--usl)")
    if d.get("excluded"):
        lines.append(f"Excluded: {len(d['excluded'])} row(s)")
        for e in d["excluded"][:10]:
            lines.append(f"  - row {e.get('row')}: {e.get('reason')}")
    for w in d.get("warnings", []):
        lines.append(f"! {w}")
    lines.append(CAUTION)
    return "\n".join(lines)


def _cmd_analyze(args: argparse.Namespace) -> int:
    from .analysis import analyze

    m = _read(args)
    res = analyze(
        m, lsl=args.lsl, usl=args.usl, target=args.target, transform=args.transform,
        chart=args.chart, rules=args.rules, required_index=args.required_index,
        round_lambda=not args.exact_lambda, zeros=args.zeros,
    )
    d = res.to_dict()
    if args.pdf:
        from .report import ReportMeta, write_pdf

        meta = ReportMeta(plant=args.plant, line=args.line, lot=args.lot, shift=args.shift,
                          operator=args.operator, date=args.date)
        write_pdf(res, args.pdf, page=args.paper, meta=meta)
    if args.json:
        sys.stdout.write(json.dumps(d, indent=2, allow_nan=False) + "\n")
    else:
        sys.stdout.write(text_summary(d) + "\n")
        if args.pdf:
            sys.stdout.write(f"PDF summary written to {args.pdf}\n")
    return EXIT_OK


#: The reader's hints (codes of ``qcnorm.io.hints.HINTS``) in the words of the command line:
#: the flags instead of Python keyword arguments. ``{flag}`` is the flag of the hint's
#: ``param``; a code not listed keeps the reader's own wording.
_CLI_WORDS: dict[str, str] = {
    "column.choose": "Choose one with --column (its name or 0-based index); 'python -m qcnorm batch FILE' "
                     "analyses them all.",
    "column.ambiguous": "Pass the full name with its units or a 0-based index as {flag}.",
    "column.unknown": "Pass one of these names (or its 0-based index) as {flag}.",
    "column.index": "Pass one of these names or an index from 0 to {last}.",
    "characteristic.choose": "Pass --characteristic with one of these names.",
    "characteristic.unknown": "Pass one of these as --characteristic.",
    "characteristic.conflict": "Leave out --column or --characteristic.",
    "characteristic.not_long": "Choose the measurement column with --column.",
    "sheet.choose": "Pass one of these names as --sheet.",
    "sheet.another": "pass --sheet to read another",
    "censored.include": "pass --include-censored to use the stated limits instead",
    "censored.include_short": "(--include-censored uses the limit)",
}
#: The reader's keyword arguments that a message may name ("column='x'"), and their flags.
_CLI_FLAGS = {"characteristic": "--characteristic", "column": "--column", "subgroup": "--subgroup",
              "sheet": "--sheet"}
_OPTION = re.compile(r"\b(" + "|".join(_CLI_FLAGS) + r")=")


def _in_cli_words(exc: BaseException) -> str:
    """The message of ``exc`` with the reader's hints and option names in the words of the CLI.

    A :class:`ReadError` carries its hint as a code: the CLI's wording of that code
    replaces the reader's. Hints quoted inside other messages (the reasons of excluded
    rows in "too few values") are found by their code's text in ``HINTS``.
    """
    words = {code: text for code, text in _CLI_WORDS.items() if "{" not in HINTS[code]}
    if isinstance(exc, ReadError) and exc.hint_code in _CLI_WORDS:
        param = str(exc.hint_args.get("param", ""))
        flag = _CLI_FLAGS.get(param, f"{param}=")
        text = f"{exc.problem} {_CLI_WORDS[exc.hint_code].format(flag=flag, **exc.hint_args)}"
    else:
        text = str(exc)
    for code, cli in words.items():
        text = text.replace(hint_text(code), cli)
    return _OPTION.sub(lambda m: _CLI_FLAGS[m.group(1)] + " ", text)


def _cmd_users_or_store(args: argparse.Namespace) -> int:
    from .cli_store import COMMANDS as STORE_COMMANDS

    return STORE_COMMANDS[args.command](args)


COMMANDS = {"analyze": _cmd_analyze, "batch": _cmd_batch, "users": _cmd_users_or_store, "store": _cmd_users_or_store}


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help/--version (0) or usage error (2)
        return int(exc.code or 0)
    try:
        return COMMANDS[args.command](args)
    except QcnormError as exc:
        sys.stderr.write(f"qcnorm: {_in_cli_words(exc)}\n")
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("qcnorm: interrupted\n")
        return EXIT_INTERNAL
    except Exception as exc:  # noqa: BLE001 - the contract: exit 1, no traceback unless asked
        if os.environ.get("QCNORM_DEBUG"):
            traceback.print_exc()
        sys.stderr.write(
            f"qcnorm: internal error ({type(exc).__name__}: {exc}). This is a bug in qcnorm; "
            "please report it with the file. Set QCNORM_DEBUG=1 to see the details.\n"
        )
        return EXIT_INTERNAL
