"""Speed and agreement of tea.finance.irr against numpy-financial and pyxirr.

Run from the repository root:

    python tests/benchmarks/bench_irr.py

All timings are measured side by side in this one run (time.perf_counter,
best of several repeats) and reported as ratios, with PASS or SHORT against
each target. The stand flows are invented demo data (a per-hectare perennial
grass stand: establishment cost, ramp-up, plateau, removal in the last year);
they are inputs to time, not check values.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pyxirr

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from tea.methods import finance  # noqa: E402

CASES = 100_000
YEARS = 25
NPF_ROWS = 10_000  # rows run through the numpy_financial loop, then extrapolated
SEED = 20240601

TARGET_SCALAR = 3.0
TARGET_VS_NPF = 300.0
TARGET_VS_PYXIRR = 5.0
TARGET_AGREEMENT = 1e-9

# Demo stand, 21 flows: establishment -2500, a weeding year, ramp-up,
# plateau, and a last year net of the removal cost.
STAND_21 = [-2500.0, -200.0, 450.0, 850.0] + [1000.0] * 16 + [350.0]


def demo_stands(rng: np.random.Generator, cases: int, years: int) -> np.ndarray:
    """Random per-hectare stand flows [currency ha⁻¹], one row per stand (demo data)."""
    establishment = -rng.uniform(1800.0, 3200.0, cases)
    first_year = -rng.uniform(100.0, 400.0, cases)
    mature_margin = (
        rng.uniform(8.0, 16.0, cases) * rng.uniform(60.0, 110.0, cases)  # t DM ha⁻¹ x price
        - rng.uniform(250.0, 600.0, cases)  # yearly costs
    )
    share = np.ones(years)
    share[2], share[3] = 0.4, 0.8  # ramp-up
    weather = rng.normal(1.0, 0.2, (cases, years))
    flows = np.empty((cases, years))
    flows[:, 0] = establishment
    flows[:, 1] = first_year
    flows[:, 2:] = mature_margin[:, None] * share[None, 2:] * weather[:, 2:]
    # a few stands lose one mid-life harvest and pay for re-fertilising
    lost = np.flatnonzero(rng.random(cases) < 0.03)
    flows[lost, rng.integers(5, years - 3, lost.size)] = -rng.uniform(100.0, 500.0, lost.size)
    flows[:, -1] -= rng.uniform(150.0, 600.0, cases)  # removal of the stand
    return flows


def best_of(fn, repeats: int) -> float:
    """Best wall time of ``repeats`` calls of ``fn`` [s]."""
    best = math.inf
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def verdict(value: float, target: float) -> str:
    return "PASS" if value >= target else "SHORT"


def main() -> None:
    print(
        f"tea.finance.irr benchmark: numpy {np.__version__}, numpy-financial {npf.__version__}, "
        f"pyxirr {pyxirr.__version__}, Python {sys.version.split()[0]}"
    )
    print("timings are the best of several repeats, measured side by side in this run\n")

    # (1) one stand, scalar fast path
    stand = list(STAND_21)
    calls = 2000

    def scalar_loop():
        for _ in range(calls):
            finance.irr_scalar(stand)

    def npf_loop_one():
        for _ in range(calls):
            npf.irr(stand)

    scalar_loop(), npf_loop_one()  # warm up
    t_scalar = best_of(scalar_loop, 7) / calls
    t_npf_one = best_of(npf_loop_one, 7) / calls
    ratio_scalar = t_npf_one / t_scalar
    print(f"(1) one {len(stand)}-flow stand (IRR {finance.irr_scalar(stand):.6f}, "
          f"numpy_financial {npf.irr(stand):.6f})")
    print(f"    irr_scalar            {t_scalar * 1e6:8.1f} us per call")
    print(f"    numpy_financial.irr   {t_npf_one * 1e6:8.1f} us per call")
    print(f"    ratio {ratio_scalar:.1f}x (target >= {TARGET_SCALAR:.0f}x): "
          f"{verdict(ratio_scalar, TARGET_SCALAR)}\n")

    # (2) many stands, vectorised
    rng = np.random.default_rng(SEED)
    flows = demo_stands(rng, CASES, YEARS)
    finance.irr(flows[:1000])  # warm up
    rates = finance.irr(flows)
    t_vec = best_of(lambda: finance.irr(flows), 5)

    subset = flows[:NPF_ROWS]
    reference = np.empty(NPF_ROWS)

    def npf_rows():
        for i, row in enumerate(subset):
            reference[i] = npf.irr(row)

    t_npf_rows = best_of(npf_rows, 3)
    t_npf_all = t_npf_rows * CASES / NPF_ROWS

    def pyxirr_rows():
        for row in flows:
            pyxirr.irr(row, silent=True)

    t_pyxirr = best_of(pyxirr_rows, 3)
    ratio_npf = t_npf_all / t_vec
    ratio_pyxirr = t_pyxirr / t_vec
    print(f"(2) {CASES:,} stands x {YEARS} years")
    print(f"    tea.finance.irr (vectorised)           {t_vec:8.3f} s")
    print(f"    numpy_financial.irr loop, {NPF_ROWS:,} rows  {t_npf_rows:8.3f} s"
          f" -> {CASES:,} rows {t_npf_all:.2f} s (extrapolated)")
    print(f"    pyxirr.irr loop, {CASES:,} rows          {t_pyxirr:8.3f} s")
    print(f"    vs numpy_financial: {ratio_npf:.0f}x (target >= {TARGET_VS_NPF:.0f}x): "
          f"{verdict(ratio_npf, TARGET_VS_NPF)}")
    print(f"    vs pyxirr:          {ratio_pyxirr:.1f}x (target >= {TARGET_VS_PYXIRR:.0f}x): "
          f"{verdict(ratio_pyxirr, TARGET_VS_PYXIRR)}\n")

    # (3) agreement and undefined rows
    unique = np.isfinite(rates[:NPF_ROWS])
    diff = np.abs(rates[:NPF_ROWS][unique] - reference[unique])
    largest = float(diff.max()) if diff.size else math.nan
    changes = finance.sign_changes(flows)
    undefined = ~np.isfinite(rates)
    print(f"(3) agreement on the first {NPF_ROWS:,} rows: {int(unique.sum()):,} with a unique IRR")
    print(f"    largest |tea - numpy_financial| = {largest:.3g} (target <= {TARGET_AGREEMENT:g}): "
          f"{'PASS' if largest <= TARGET_AGREEMENT else 'SHORT'}")
    print(f"    rows reported undefined: {int(undefined.sum()):,} of {CASES:,} "
          f"(no sign change {int((undefined & (changes == 0)).sum()):,}, "
          f"even number of sign changes {int((undefined & (changes > 0) & (changes % 2 == 0)).sum()):,}, "
          f"odd >= 3 but not one root {int((undefined & (changes % 2 == 1)).sum()):,})")
    print(f"    rows with 3 or more sign changes solved: "
          f"{int((~undefined & (changes >= 3)).sum()):,} of {int((changes >= 3).sum()):,}")


if __name__ == "__main__":
    main()
