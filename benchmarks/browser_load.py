"""Upload-to-charts time in a real browser (prints timings; not a timed test).

Starts ``streamlit run app.py`` on 127.0.0.1, drives Debian's /usr/bin/chromium through
Playwright, uploads a 10,000-row CSV and measures:

1. upload -> the ingest report drawn (Load page),
2. Shape page opened -> all 4 plotly charts drawn,
3. Stability page opened -> both charts drawn,
4. Capability page opened -> its chart drawn,
5. the same file uploaded again (cached) -> the Load page drawn.

The target (issue 5): from upload of a 10,000-row file to all charts drawn under 3 s.
Run:  .venv/bin/python benchmarks/browser_load.py [--rows 10000] [--repeat 2]
"""

from __future__ import annotations

import argparse
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _write_csv(path: Path, rows: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    x = rng.lognormal(np.log(0.5), 0.35, rows)
    sub = np.arange(rows) // 5
    with path.open("w") as f:
        f.write("Subgroup,Roughness [µm]\n")
        for s, v in zip(sub, x):
            f.write(f"S{s:05d},{v:.4f}\n")


def _charts(page, n: int) -> None:
    page.wait_for_function(
        f"() => document.querySelectorAll('.js-plotly-plot .main-svg').length >= {n}"
        " && !document.querySelector('[data-stale=\"true\"]')", timeout=120_000)


def _idle(page) -> None:
    page.wait_for_function(
        "() => !document.querySelector('[data-testid=\"stStatusWidget\"]')"
        " && !document.querySelector('[data-stale=\"true\"]')", timeout=120_000)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=10_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    if not Path(CHROMIUM).exists():
        print("Chromium not installed at /usr/bin/chromium: nothing measured.")
        return 0
    from playwright.sync_api import sync_playwright

    port = _free_port()
    url = f"http://127.0.0.1:{port}"
    proc = subprocess.Popen(
        [sys.executable, "-m", "streamlit", "run", str(ROOT / "app.py"), "--server.headless", "true",
         "--server.port", str(port), "--server.address", "127.0.0.1",
         "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none"],
        cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    try:
        for _ in range(200):
            try:
                with urllib.request.urlopen(f"{url}/_stcore/health", timeout=2):
                    break
            except OSError:
                time.sleep(0.3)
        with tempfile.TemporaryDirectory() as tmp, sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
            # one browser context for all runs: its cache holds the app's scripts (plotly.js)
            # after the first run, as a technician's browser does
            context = browser.new_context(viewport={"width": 1500, "height": 1000})
            print(f"rows = {args.rows}; times in seconds (wall clock, browser + server on this machine)")
            print(f"{'run':>4} {'upload->report':>15} {'shape 4 charts':>15} {'stability':>10} "
                  f"{'capability':>11} {'total':>7}")
            for r in range(args.repeat):
                csv = Path(tmp) / f"bench_{r}.csv"
                _write_csv(csv, args.rows, seed=r)  # a new file each run: nothing cached
                page = context.new_page()
                page.goto(url, wait_until="domcontentloaded")
                page.get_by_text("What was read").wait_for(timeout=120_000)  # demo drawn first
                _idle(page)
                page.get_by_text("Upload a file").click()
                _idle(page)
                t0 = time.perf_counter()
                page.locator('input[type="file"]').set_input_files(str(csv))
                page.get_by_text(f"Loaded: {csv.name}").wait_for(timeout=120_000)
                _idle(page)
                t1 = time.perf_counter()
                side = page.locator('[data-testid="stSidebar"]')
                side.get_by_text("2 · Shape", exact=True).click()
                page.get_by_text("Normality before and after").wait_for(timeout=120_000)
                _charts(page, 4)
                t2 = time.perf_counter()
                side.get_by_text("3 · Stability", exact=True).click()
                page.get_by_text("Assignable causes").wait_for(timeout=120_000)
                _charts(page, 2)
                t3 = time.perf_counter()
                side.get_by_text("4 · Capability", exact=True).click()
                page.get_by_text("to compute capability").wait_for(timeout=120_000)
                _idle(page)
                t4 = time.perf_counter()
                print(f"{r + 1:>4} {t1 - t0:>15.2f} {t2 - t1:>15.2f} {t3 - t2:>10.2f} {t4 - t3:>11.2f} "
                      f"{t4 - t0:>7.2f}")
                page.close()
            context.close()
            browser.close()
    finally:
        try:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=10)
        except (ProcessLookupError, subprocess.TimeoutExpired):
            os.killpg(proc.pid, signal.SIGKILL)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
