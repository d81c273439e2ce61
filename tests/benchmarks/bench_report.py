"""Render time of the printed summary, per demo case, and of the comparison report.

Run from the repository root:

    python tests/benchmarks/bench_report.py [--repeat N]

For each demo case it times, side by side in this one run (time.perf_counter,
best of N repeats, after one warm-up render that pays for the imports):

* pdf: ``render_summary`` to a PDF, fitting the page from scratch (one layout by
  WeasyPrint, or one measure and one more layout, then the PDF written);
* html: ``render_summary`` to HTML from scratch (the fit is measured with the
  same layout engine, so the HTML prints on one sheet too);
* html after pdf: HTML when the PDF of the same case was just made (the fit is
  reused, as with ``tea run CASE --pdf A --html B``);

then the comparison report of all demo cases as PDF. It prints seconds and the
ratio of each time to the PDF time of the same case, and the density each page
needed (0 = the normal type size).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

import tea  # noqa: E402
from tea.outputs import report  # noqa: E402

CASES = sorted((ROOT / "cases").glob("*.toml"))


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="repeats per timing (best is kept)")
    args = parser.parse_args(argv)

    loaded = []
    for path in CASES:
        case = tea.load_case(path)
        frame = tea.build_ledger(case)
        loaded.append((path.stem, case, frame, tea.summarise(case, frame)))

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        t0 = time.perf_counter()
        _, c, f, r = loaded[0]
        report.render_summary(c, f, r, out / "warm.pdf", force=True)
        warm = time.perf_counter() - t0
        report._fit_cache.clear()
        print(f"first render in this process (imports of WeasyPrint and matplotlib included): {warm:.2f} s")
        print()
        print(f"{'case':<26}{'paper':>7}{'density':>9}{'pdf [s]':>10}{'html [s]':>10}{'ratio':>7}"
              f"{'html after pdf [s]':>20}{'ratio':>7}")
        for stem, case, frame, res in loaded:
            def pdf():
                report._fit_cache.clear()
                report.render_summary(case, frame, res, out / f"{stem}.pdf", force=True)

            def html():
                report._fit_cache.clear()
                report.render_summary(case, frame, res, out / f"{stem}.html", force=True)

            def html_after_pdf():
                report.render_summary(case, frame, res, out / f"{stem}-2.html", force=True)

            t_pdf = _best(pdf, args.repeat)
            density = next(v for k, v in report._fit_cache.items() if k[0] == "summary")
            t_html = _best(html, args.repeat)
            report.render_summary(case, frame, res, out / f"{stem}.pdf", force=True)  # fit cached
            t_after = _best(html_after_pdf, args.repeat)
            size = report._page_size(None, case)
            print(f"{stem:<26}{size:>7}{density:>9}{t_pdf:>10.2f}{t_html:>10.2f}{t_html / t_pdf:>7.2f}"
                  f"{t_after:>20.2f}{t_after / t_pdf:>7.2f}")

        cases, frames, results = ([x[i] for x in loaded] for i in (1, 2, 3))

        def compare():
            report._fit_cache.clear()
            report.render_comparison(cases, frames, results, out / "compare.pdf", force=True)

        t_cmp = _best(compare, args.repeat)
        pages = 1 + len(cases)
        print()
        print(f"comparison of {len(cases)} cases, PDF ({pages} pages): {t_cmp:.2f} s, {t_cmp / pages:.2f} s per page")
    return 0


if __name__ == "__main__":
    sys.exit(main())
