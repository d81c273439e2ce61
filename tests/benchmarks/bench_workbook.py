"""Time to write live-formula workbooks, side by side with the core computation.

Run from the repository root:

    python tests/benchmarks/bench_workbook.py

Prints, measured in this one run (time.perf_counter, best of several repeats):
the core computation of one demo case (ledger + decision figures), the
single-case workbook written to a file and its ratio to the core computation,
and a 100-case portfolio workbook (100 variants of the demo case with invented
prices), each with PASS or SHORT against its target. Imports are timed apart
and excluded from the targets. Not a test: the machine is shared, so nothing
here asserts a time.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

T0 = time.perf_counter()
import tea  # noqa: E402
from tea.outputs import workbook  # noqa: E402
import openpyxl.chart  # noqa: E402,F401  (charts are serialised with openpyxl: an import, not work)
IMPORTS = time.perf_counter() - T0

TARGET_SINGLE_S = 0.25  # one workbook, beyond imports
TARGET_PORTFOLIO_S = 15.0  # 100 cases
PORTFOLIO_CASES = 100
CASE = ROOT / "cases" / "clay_corner_miscanthus.toml"


def best(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> None:
    case = tea.load_case(CASE)
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)

    def core():
        f = tea.build_ledger(case)
        tea.summarise(case, f)

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "one.xlsx"

        def single():
            workbook.write_workbook(case, frame, res, out, force=True)

        t = time.perf_counter()
        single()  # the first write of a process (after the imports): what `tea run --xlsx` pays
        t_first = time.perf_counter() - t
        t_core = best(core, 20)
        t_single = best(single, 10)
        size = out.stat().st_size

        variants = [case.replace(**{"revenue.price_per_t_dm": 70.0 + 0.5 * i}) for i in range(PORTFOLIO_CASES)]
        ledgers = [tea.build_ledger(c) for c in variants]
        results = [tea.summarise(c, f) for c, f in zip(variants, ledgers)]
        many = Path(tmp) / "many.xlsx"
        t_port = best(lambda: workbook.write_portfolio(variants, ledgers, results, many, force=True), 2)
        port_size = many.stat().st_size
        sheets = 1 + 6 * PORTFOLIO_CASES

    def verdict(t, target):
        return "PASS" if t <= target else "SHORT"

    print(f"imports (tea, tea.workbook, openpyxl.chart): {IMPORTS:.3f} s (not counted)")
    print(f"core computation, one case (ledger + figures): {1000 * t_core:.2f} ms")
    print(f"first single-case workbook of the process: {1000 * t_first:.1f} ms; target <= "
          f"{1000 * TARGET_SINGLE_S:.0f} ms: {verdict(t_first, TARGET_SINGLE_S)}")
    print(f"single-case workbook written: {1000 * t_single:.1f} ms, {size / 1024:.0f} KiB, "
          f"{t_single / t_core:.1f} x the core computation; target <= {1000 * TARGET_SINGLE_S:.0f} ms: "
          f"{verdict(t_single, TARGET_SINGLE_S)}")
    print(f"{PORTFOLIO_CASES}-case portfolio workbook: {t_port:.2f} s, {port_size / 1024 / 1024:.1f} MiB, "
          f"{sheets} sheets, {1000 * t_port / sheets:.1f} ms a sheet, {1000 * t_port / PORTFOLIO_CASES:.0f} ms a "
          f"case; target <= {TARGET_PORTFOLIO_S:.0f} s: {verdict(t_port, TARGET_PORTFOLIO_S)}")


if __name__ == "__main__":
    main()
