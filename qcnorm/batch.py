"""Many characteristics at once: the same analyze() over every column of a file.

``run_batch`` reads the file once, analyses each characteristic (in parallel over
processes when ``jobs > 1``), and returns one summary row per characteristic, ranked
worst first. A characteristic that cannot be analysed is reported in its own row with
the reason and never stops the others.
"""

from __future__ import annotations

import math
import os
import sys
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ._results import Result
from .errors import ConfigError, QcnormError, ReadError

__all__ = ["SpecRow", "BatchRow", "BatchResult", "read_specs", "run_batch", "SUMMARY_COLUMNS"]

SUMMARY_COLUMNS = (
    "rank", "characteristic", "units", "n", "lsl", "usl", "target", "required_index", "transform",
    "ad_p_raw", "ad_p_transformed", "in_control", "violations", "cpk", "cpk_lower", "ppk",
    "ppk_lower", "ppk_ci_low", "ppk_ci_high", "ppm_overall", "ppm_observed", "percentile_ppk", "verdict", "warnings", "error",
)


@dataclass(frozen=True, slots=True)
class SpecRow(Result):
    """Spec limits of one characteristic, from the specs file."""

    characteristic: str
    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    required_index: float = 1.33
    units: str | None = None


@dataclass(frozen=True, slots=True)
class BatchRow(Result):
    """The summary of one characteristic (None where a figure does not apply)."""

    characteristic: str
    units: str | None = None
    n: int | None = None
    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    required_index: float = 1.33
    transform: str | None = None
    ad_p_raw: float | None = None
    ad_p_transformed: float | None = None
    in_control: bool | None = None
    violations: int | None = None
    cpk: float | None = None
    cpk_lower: float | None = None
    ppk: float | None = None
    ppk_lower: float | None = None
    ppk_ci_low: float | None = None
    ppk_ci_high: float | None = None
    ppm_overall: float | None = None
    ppm_observed: float | None = None
    percentile_ppk: float | None = None
    verdict: str = "not_assessed"
    warnings: str = ""
    error: str | None = None
    rank: int = 0
    pdf: str | None = None

    @property
    def sort_key(self) -> tuple:
        """Worst first: failures to analyse, then by the lower confidence bound of the
        verdict index (min of Cpk and Ppk), unassessed (no specs) last."""
        if self.error:
            return (0, 0.0, self.characteristic)
        low = [v for v in (self.cpk_lower, self.ppk_lower) if v is not None and math.isfinite(v)]
        if not low:
            return (2, 0.0, self.characteristic)
        return (1, min(low), self.characteristic)


@dataclass(frozen=True, slots=True)
class BatchResult(Result):
    rows: tuple[BatchRow, ...]
    source: str
    seconds: float
    jobs: int
    engine: str = "local"

    @property
    def n_failed(self) -> int:
        return sum(1 for r in self.rows if r.error)

    def frame(self) -> pd.DataFrame:
        """The ranked summary table, one row per characteristic, worst first."""
        recs = [r.to_dict() for r in self.rows]
        df = pd.DataFrame.from_records(recs, columns=[*SUMMARY_COLUMNS, "pdf"])
        if not any(r.pdf for r in self.rows):
            df = df.drop(columns=["pdf"])
        return df


def _num(v: Any, what: str, row: int, path: str) -> float | None:
    if v is None:
        return None
    s = str(v).strip()
    if s == "" or s.lower() in {"nan", "none", "-", "—"}:
        return None
    try:
        f = float(s.replace(",", ".")) if s.count(",") == 1 and "." not in s else float(s)
    except ValueError:
        raise ReadError(
            f"Specs file {path}, row {row}: {what} {s!r} is not a number. Leave it blank or write a number."
        ) from None
    if not math.isfinite(f):
        raise ReadError(f"Specs file {path}, row {row}: {what} must be finite.")
    return f


def read_specs(source: Any) -> dict[str, SpecRow]:
    """Read a specs CSV: columns characteristic, lsl, usl, target, required_index, units.

    Only ``characteristic`` is required; blank cells mean "no limit". Names are matched
    case- and space-insensitively against the data file's characteristics.
    """
    name = str(source)
    try:
        df = pd.read_csv(source, dtype=str, keep_default_na=False, sep=None, engine="python")
    except FileNotFoundError:
        raise ReadError(f"Specs file not found: {name}. Check the path.") from None
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, ValueError) as exc:
        raise ReadError(
            f"Specs file {name} cannot be read as CSV ({exc}). Expected columns: characteristic, lsl, usl, "
            "target, required_index, units."
        ) from None
    cols = {c.strip().lower().replace(" ", "_"): c for c in df.columns}
    if "characteristic" not in cols:
        raise ReadError(
            f"Specs file {name} has no 'characteristic' column (columns: {', '.join(map(str, df.columns))}). "
            "Expected columns: characteristic, lsl, usl, target, required_index, units."
        )
    out: dict[str, SpecRow] = {}
    for i, rec in enumerate(df.to_dict("records"), start=2):
        ch = str(rec[cols["characteristic"]]).strip()
        if not ch:
            continue
        get = lambda k: rec.get(cols[k]) if k in cols else None  # noqa: E731
        lsl, usl = _num(get("lsl"), "lsl", i, name), _num(get("usl"), "usl", i, name)
        if lsl is not None and usl is not None and lsl >= usl:
            raise ReadError(f"Specs file {name}, row {i} ({ch}): lsl {lsl:g} must be below usl {usl:g}.")
        req = _num(get("required_index"), "required_index", i, name)
        units = (get("units") or "").strip() or None
        out[_key(ch)] = SpecRow(ch, lsl, usl, _num(get("target"), "target", i, name),
                                1.33 if req is None else req, units)
    return out


def _key(name: str) -> str:
    return "".join(str(name).lower().split())


def _analyse_task(task: tuple) -> list[tuple[int, BatchRow]]:
    """Worker: analyse a task's characteristics; never raises for bad data."""
    items, opts, pdf_dir = task
    return [(idx, _analyse_item(name, item, spec, opts, pdf_dir)) for idx, name, item, spec in items]


def _task_failed(task: tuple, exc: BaseException) -> list[tuple[int, BatchRow]]:
    """Rows for a task that could not be run at all (e.g. its worker kept dying)."""
    items, _, _ = task
    msg = (f"not analysed: the worker running it failed ({type(exc).__name__}: {exc}); "
           "run the batch again or with --engine local")
    return [(idx, BatchRow(characteristic=name, error=msg,
                           lsl=spec.lsl if spec else None, usl=spec.usl if spec else None))
            for idx, name, _item, spec in items]


def _analyse_item(name: str, item: Any, spec: SpecRow | None, opts: dict, pdf_dir: str | None) -> BatchRow:
    """Read (when needed) and analyse one characteristic."""
    from .batch_input import materialize

    try:
        ready = materialize(item)
    except QcnormError as exc:
        return BatchRow(characteristic=name, error=str(exc),
                        lsl=spec.lsl if spec else None, usl=spec.usl if spec else None)
    units = ready.units or (spec.units if spec else None)
    return _analyse_one((name, units, ready.values, ready.subgroups, spec, opts, pdf_dir))


def _analyse_one(task: tuple) -> BatchRow:
    """Analyse one characteristic's values; never raises for bad data."""
    name, units, values, subgroups, spec, opts, pdf_dir = task
    from .analysis import analyze

    base = BatchRow(
        characteristic=name, units=units,
        lsl=spec.lsl if spec else None, usl=spec.usl if spec else None,
        target=spec.target if spec else None, required_index=spec.required_index if spec else 1.33,
    )
    try:
        a = analyze(
            values, subgroups=subgroups, lsl=base.lsl, usl=base.usl, target=base.target,
            required_index=base.required_index, characteristic=name, units=units, **opts,
        )
    except QcnormError as exc:
        return replace(base, n=int(np.size(values)), error=str(exc))
    except Exception as exc:  # noqa: BLE001 - one bad characteristic never stops the others
        return replace(base, n=int(np.size(values)),
                       error=f"internal error ({type(exc).__name__}: {exc}); please report it")
    cap = a.capability
    ch = a.chart
    pdf_path = None
    if pdf_dir:
        try:
            from .report import ReportMeta, write_pdf

            safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in name) or "characteristic"
            pdf_path = str(write_pdf(a, Path(pdf_dir) / f"{safe}.pdf",
                                     meta=ReportMeta(characteristic=name, units=units)))
        except Exception as exc:  # noqa: BLE001
            pdf_path = f"(PDF failed: {exc})"
    return replace(
        base,
        n=a.n,
        transform=a.transform.name,
        ad_p_raw=a.normality_raw.ad_p_value,
        ad_p_transformed=a.normality_transformed.ad_p_value,
        in_control=bool(ch.in_control),
        violations=len(ch.violations) + len(ch.dispersion.violations),
        cpk=None if cap is None else cap.cpk,
        cpk_lower=None if cap is None else cap.cpk_lower_bound,
        ppk=None if cap is None else cap.ppk,
        ppk_lower=None if cap is None else cap.ppk_lower_bound,
        ppk_ci_low=None if cap is None or cap.ppk_ci is None else cap.ppk_ci.low,
        ppk_ci_high=None if cap is None or cap.ppk_ci is None else cap.ppk_ci.high,
        ppm_overall=None if cap is None else cap.ppm_overall,
        ppm_observed=None if cap is None else cap.ppm_observed,
        percentile_ppk=None if a.percentile is None else a.percentile.ppk,
        verdict="not_assessed" if cap is None else cap.verdict,
        warnings=" | ".join(a.warnings),
        pdf=pdf_path,
    )


def _progress_bar(stream) -> Callable[[int, int], None]:
    def show(done: int, total: int) -> None:
        width = 30
        filled = int(width * done / max(total, 1))
        stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
        if done >= total:
            stream.write("\n")
        stream.flush()

    return show


def run_batch(
    source: Any,
    *,
    specs: Mapping[str, SpecRow] | str | os.PathLike | None = None,
    subgroup: str | None = None,
    sheet: str | int | None = None,
    jobs: int = 1,
    pdf_dir: str | os.PathLike | None = None,
    progress: Callable[[int, int], None] | bool | None = None,
    transform: str = "auto",
    chart: str = "auto",
    rules: str = "beyond_limits",
    round_lambda: bool = True,
    include_censored: bool = False,
    zeros: str = "censor",
    engine: str = "auto",
    scheduler: str | None = None,
    read_mode: str = "auto",
    chunk_rows: int = 200_000,
    chunk_cells: int = 5_000_000,
    task_size: int | None = None,
) -> BatchResult:
    """Analyse every characteristic of a wide or long file, or of a folder of files.

    Parameters
    ----------
    source : path, bytes, file-like or DataFrame
        A wide file (one column per characteristic), a long file (characteristic
        and value columns), or a folder of CSV files (a characteristic's rows from
        every file are analysed together, in file-name order).
    specs : mapping or path to a specs CSV, optional
        Spec limits per characteristic (see :func:`read_specs`); characteristics
        without specs are analysed for shape and stability only.
    subgroup : str, optional
        Column of subgroup labels shared by all characteristics.
    jobs : int
        Workers (1 = in this process; 0 = one per core). With a Dask scheduler the
        cluster's own workers are used.
    pdf_dir : path, optional
        Write one PDF summary per characteristic into this folder.
    progress : callable(done, total) or True for a bar on stderr.
    transform, chart, rules, round_lambda, zeros : as for :func:`qcnorm.analyze`.
    include_censored : as for :func:`qcnorm.read_measurements`.
    engine : {"auto", "local", "pool", "dask"}
        Where the work runs (see :mod:`qcnorm.engines`). "auto": Dask when a
        scheduler address is given, else the process pool (``jobs > 1``) or this process.
    scheduler : str, optional
        Address of a Dask scheduler (``tcp://host:8786``); default ``QCNORM_SCHEDULER``.
    read_mode : {"auto", "whole", "chunked"}
        "whole" reads the file at once with the careful reader; "chunked" reads a
        delimited text file in pieces (see :mod:`qcnorm.batch_input`); "auto" picks
        by file size (chunked from :data:`qcnorm.batch_input.SMALL_FILE_BYTES` up).
    chunk_rows : int
        Rows per chunk when a long file or a folder is read in chunks.
    chunk_cells : int
        Cells per group of columns when a wide file is read in chunks.
    task_size : int, optional
        Characteristics per task sent to a worker (default: enough to give each
        worker about eight tasks, at most 64 per task).
    """
    from .batch_input import plan_items
    from .engines import scheduler_address

    t0 = time.perf_counter()
    jobs = _check_sizes(jobs, task_size, chunk_rows, chunk_cells)
    specs = _spec_table(specs)
    if pdf_dir is not None:
        Path(pdf_dir).mkdir(parents=True, exist_ok=True)
    if progress is True:
        progress = _progress_bar(sys.stderr)
    elif progress is False:
        progress = None
    address = scheduler_address(scheduler)

    plan = plan_items(source, subgroup=subgroup, sheet=sheet, include_censored=include_censored,
                      read_mode=read_mode, chunk_rows=chunk_rows, chunk_cells=chunk_cells)
    try:
        opts = {"transform": transform, "chart": chart, "rules": rules, "round_lambda": round_lambda,
                "zeros": zeros}
        order, chosen, workers = _run_plan(plan, specs, opts, None if pdf_dir is None else str(pdf_dir),
                                  engine=engine, address=address, jobs=jobs, task_size=task_size,
                                  progress=progress)
    finally:
        plan.close()
    return BatchResult(rows=_ranked(order), source=str(getattr(source, "name", source))[:200],
                       seconds=time.perf_counter() - t0, jobs=workers, engine=chosen)


def _check_sizes(jobs: Any, task_size: Any, chunk_rows: Any, chunk_cells: Any) -> int:
    """The numbers of run_batch checked; returns ``jobs`` with 0 (or None) as one per core."""
    if jobs is None or jobs == 0:
        jobs = os.cpu_count() or 1
    if not isinstance(jobs, int) or jobs < 0:
        raise ConfigError(f"jobs must be a whole number ≥ 0 (0 = one per core). Got {jobs!r} instead.")
    if task_size is not None and (not isinstance(task_size, int) or task_size < 1):
        raise ConfigError(f"task_size must be a whole number ≥ 1. Got {task_size!r} instead.")
    for nm, v in (("chunk_rows", chunk_rows), ("chunk_cells", chunk_cells)):
        if isinstance(v, bool) or not isinstance(v, int) or v < 1:
            raise ConfigError(f"{nm} must be a whole number ≥ 1. Got {v!r} instead.")
    return jobs


def _spec_table(specs: Mapping[str, SpecRow] | str | os.PathLike | None) -> dict[str, SpecRow]:
    """Spec rows keyed by :func:`_key` (a path is read with :func:`read_specs`)."""
    if specs is not None and not isinstance(specs, Mapping):
        specs = read_specs(specs)
    return {_key(k): v for k, v in (specs or {}).items()}


def _run_plan(plan: Any, specs: dict[str, SpecRow], opts: dict, pdf: str | None, *, engine: str,
              address: str | None, jobs: int, task_size: int | None,
              progress: Callable[[int, int], None] | None) -> tuple[dict[int, BatchRow], str, int]:
    """Group the plan's items into tasks, run them on the chosen engine and collect the rows
    by their place in the file: ({index: row}, engine name, workers that ran them)."""
    from .engines import choose_engine, run_tasks

    total = plan.total
    size = task_size or max(1, min(64, math.ceil(total / max(1, jobs * 8))))
    chosen = choose_engine(engine, address, jobs, math.ceil(total / size) if total else 0)
    if task_size is None:  # in this process, one characteristic per task: progress as each is done
        task_size = 1 if chosen == "local" else size
    order: dict[int, BatchRow] = {}
    tasks = _tasks(plan.items, specs, order, task_size, opts, pdf)
    if chosen == "pool":
        from . import analysis  # noqa: F401 - imported once here, inherited by forked workers
    done = 0
    if progress:
        progress(0, total)
    info: dict = {}
    for _task, rows in run_tasks(_analyse_task, tasks, engine=chosen, jobs=jobs, scheduler=address,
                                 on_fail=_task_failed, info=info):
        for idx, row in rows:
            order[idx] = row
        done = len(order)
        if progress:
            progress(done, total)
    if progress and done < total:
        progress(len(order), total)
    return order, chosen, int(info.get("workers", 1 if chosen == "local" else jobs))


def _tasks(items: Any, specs: dict[str, SpecRow], order: dict[int, BatchRow], task_size: int,
           opts: dict, pdf: str | None):
    """Tasks of up to ``task_size`` characteristics, ``(items, opts, pdf_dir)``, lazily; an item
    that could not be read goes straight into ``order`` as its error row."""
    from .data import split_units

    task: list[tuple] = []
    for idx, (header, item) in enumerate(items):
        name = split_units(header)[0] or header  # "Ra [µm]" -> "Ra": the name specs use
        spec = specs.get(_key(name)) or specs.get(_key(header))
        if isinstance(item, QcnormError):
            order[idx] = BatchRow(characteristic=name, error=str(item),
                                  lsl=spec.lsl if spec else None, usl=spec.usl if spec else None)
            continue
        task.append((idx, name, item, spec))
        if len(task) >= task_size:
            yield (tuple(task), opts, pdf)
            task = []
    if task:
        yield (tuple(task), opts, pdf)


def _ranked(order: dict[int, BatchRow]) -> tuple[BatchRow, ...]:
    """Rows in file order, then ranked worst first (:attr:`BatchRow.sort_key`), rank 1 first."""
    rows = [order[i] for i in sorted(order)]
    ranked = sorted(rows, key=lambda r: r.sort_key)
    return tuple(replace(r, rank=i + 1) for i, r in enumerate(ranked))
