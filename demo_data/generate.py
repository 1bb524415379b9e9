"""Generate qcnorm's demo data: an invented plant, line and product.

Scenario (fictional): Harrowgate Precision Works, machining cell "Line 3", making the
HX-40 hydraulic valve spool. Each shift (A, B, C) takes 6 subgroups of 5 consecutive
parts. Characteristics:

- ``Ra [µm]``            surface roughness; skewed (lognormal), one-sided USL.
- ``Flatness [µm]``      bounded at zero, right-skewed (Weibull shape 1.6), one-sided USL.
- ``Residue [mg]``       cleanliness residue; many parts read 0.00 on the balance, skewed.
- ``Hardness [HRC]``     near normal but the tester reads in 0.5 HRC steps (coarse resolution).
- ``Coating [µm]``       gamma-like thickness with an out-of-control episode (a drift
                         during two shifts after a bath change).
- ``Bore [mm]``          already normal, two-sided spec.

Run ``python demo_data/generate.py`` to rewrite the CSV files beside this script. The
seed is fixed, so the files are identical on every machine.
"""

from __future__ import annotations

import csv
from datetime import date, datetime, timedelta
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 40_2026
DAYS = 10
SHIFTS = ("A", "B", "C")
SUBGROUPS_PER_SHIFT = 6
SUBGROUP_SIZE = 5
START = date(2026, 11, 16)

CHARACTERISTICS = {
    # name: (units, lsl, usl, target, required_index)
    "Ra": ("µm", None, 1.6, None, 1.33),
    "Flatness": ("µm", 0.0, 12.0, None, 1.33),
    "Residue": ("mg", None, 2.5, None, 1.33),
    "Hardness": ("HRC", 56.0, 62.0, 59.0, 1.33),
    "Coating": ("µm", 8.0, 20.0, 12.0, 1.33),
    "Bore": ("mm", 11.980, 12.020, 12.000, 1.33),
}


def _simulate(rng: np.random.Generator, n: int, shift_index: np.ndarray) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    out["Ra"] = np.round(rng.lognormal(mean=np.log(0.55), sigma=0.32, size=n), 3)
    out["Flatness"] = np.round(3.2 * rng.weibull(1.6, size=n), 2)
    residue = rng.lognormal(mean=np.log(0.35), sigma=0.8, size=n)
    residue[residue < 0.12] = 0.0  # balance reads 0.00 below its resolution
    out["Residue"] = np.round(residue, 2)
    out["Hardness"] = np.round(rng.normal(59.2, 0.55, size=n) * 2) / 2
    coating = 8.0 + rng.gamma(shape=4.0, scale=0.85, size=n)
    drift = (shift_index >= 17) & (shift_index <= 18)  # bath change on day 6
    coating[drift] += np.linspace(1.0, 3.5, drift.sum())
    out["Coating"] = np.round(coating, 2)
    out["Bore"] = np.round(rng.normal(12.0015, 0.0035, size=n), 4)
    return out


def build_rows(seed: int = SEED) -> list[dict[str, object]]:
    rng = np.random.default_rng(seed)
    rows: list[dict[str, object]] = []
    stamps, labels, shift_idx, shifts, days = [], [], [], [], []
    k = 0
    for d in range(DAYS):
        day = START + timedelta(days=d)
        for s, shift in enumerate(SHIFTS):
            for g in range(SUBGROUPS_PER_SHIFT):
                t0 = datetime(day.year, day.month, day.day, 6 + 8 * s) + timedelta(minutes=75 * g)
                for j in range(SUBGROUP_SIZE):
                    stamps.append(t0 + timedelta(minutes=2 * j))
                    labels.append(f"{day:%m%d}-{shift}{g + 1}")
                    shift_idx.append(d * len(SHIFTS) + s)
                    shifts.append(shift)
                    days.append(day)
                    k += 1
    values = _simulate(rng, k, np.asarray(shift_idx))
    for i in range(k):
        row: dict[str, object] = {
            "Date": days[i].isoformat(),
            "Shift": shifts[i],
            "Subgroup": labels[i],
            "Time": stamps[i].strftime("%Y-%m-%d %H:%M"),
            "Part": f"HX40-{100000 + i}",
        }
        for name, (units, *_rest) in CHARACTERISTICS.items():
            row[f"{name} [{units}]"] = f"{values[name][i]:g}"
        rows.append(row)
    return rows


def _write_rows(path: Path, rows: list[dict[str, object]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    return path


def write_all(folder: Path = HERE, seed: int = SEED) -> list[Path]:
    rows = build_rows(seed)
    written: list[Path] = []
    written.append(_write_rows(folder / "line3_spool_wide.csv", rows))

    # The latest shift only: what a technician loads at the end of a shift.
    last_day, last_shift = rows[-1]["Date"], rows[-1]["Shift"]
    shift_rows = [r for r in rows if r["Date"] == last_day and r["Shift"] == last_shift]
    written.append(_write_rows(folder / "line3_spool_last_shift.csv", shift_rows))

    # The same data in long layout (one measurement per line).
    long = folder / "line3_spool_long.csv"
    with long.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["Time", "Subgroup", "Characteristic", "Units", "Value"])
        for r in rows:
            for name, (units, *_rest) in CHARACTERISTICS.items():
                w.writerow([r["Time"], r["Subgroup"], name, units, r[f"{name} [{units}]"]])
    written.append(long)

    specs = folder / "line3_spool_specs.csv"
    with specs.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["characteristic", "lsl", "usl", "target", "required_index", "units"])
        for name, (units, lsl, usl, target, req) in CHARACTERISTICS.items():
            w.writerow([name, "" if lsl is None else lsl, "" if usl is None else usl,
                        "" if target is None else target, req, units])
    written.append(specs)
    return written


if __name__ == "__main__":
    for p in write_all():
        print(f"wrote {p.relative_to(HERE.parent)}")
