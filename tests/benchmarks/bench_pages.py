"""How long the printed summary takes, whole process, as a user runs it.

Run from the repository root:

    python tests/benchmarks/bench_pages.py [--repeat N] [--cases N]

Each timing is a fresh ``python -m tea`` process (imports, loading, computing,
laying out and writing included), measured side by side in this one run
(time.perf_counter around the process, median of N repeats):

* ``tea run CASE --brief``: the terminal summary, the yardstick;
* ``tea run CASE --brief --pdf OUT.pdf``: the grower's page, printed as a
  multiple of the yardstick (target <= 2.5x);
* a comparison of the three demo cases as PDF (target <= 5 s);
* a comparison of 100 cases as PDF (target <= 60 s), with the peak resident
  memory of the process (target <= 1 GB), read from ``os.wait4``.

The 100 cases are the demo cases (demo data) copied with their names, areas
and prices varied, written to a temporary folder. This is a benchmark, never
a timed test: it prints what it measured and exits 0.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

from conftest import to_toml  # noqa: E402

CASES = sorted((ROOT / "cases").glob("*.toml"))
CASE = ROOT / "cases" / "clay_corner_miscanthus.toml"


def _run(args: list[str]) -> tuple[float, float]:
    """Wall time [s] and peak resident memory [MB] of one ``python -m tea`` process."""
    env = dict(os.environ, MPLBACKEND="Agg")
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-m", "tea", *args], cwd=ROOT, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _pid, status, usage = os.wait4(proc.pid, 0)
    seconds = time.perf_counter() - t0
    err = proc.stderr.read().decode()
    proc.stderr.close()
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"tea {' '.join(args)} failed:\n{err}")
    return seconds, usage.ru_maxrss / 1024.0  # Linux: ru_maxrss in kB


def _median(args: list[str], repeat: int) -> tuple[float, float]:
    runs = [_run(args) for _ in range(repeat)]
    return statistics.median(t for t, _ in runs), max(m for _, m in runs)


def _many_cases(folder: Path, n: int) -> list[Path]:
    """``n`` variants of the demo cases: names, areas and prices varied (demo data)."""
    paths = []
    for i in range(n):
        source = CASES[i % len(CASES)]
        data = tomllib.loads(source.read_text(encoding="utf-8"))
        data["case"]["name"] = f"{data['case']['name']} - variant {i + 1}"
        area_key = next(k for k in data["field"] if k.startswith("area_"))
        data["field"][area_key] = round(data["field"][area_key] * (0.8 + 0.004 * i), 2)
        price_key = next(k for k in data["revenue"] if k.startswith("price_per_"))
        data["revenue"][price_key] = round(data["revenue"][price_key] * (0.85 + 0.003 * i), 2)
        path = folder / f"variant_{i + 1:03d}.toml"
        path.write_text(to_toml(data), encoding="utf-8")
        paths.append(path)
    return paths


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="repeats of the short timings (median kept)")
    parser.add_argument("--cases", type=int, default=100, help="cases in the large comparison")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        brief, _ = _median(["run", str(CASE), "--brief"], args.repeat)
        page, page_mb = _median(["run", str(CASE), "--brief", "--pdf", str(out / "a.pdf"), "--force"], args.repeat)
        three, three_mb = _median(["run", *map(str, CASES), "--brief", "--pdf", str(out / "c3.pdf"), "--force"],
                                  args.repeat)
        many = _many_cases(out, args.cases)
        big, big_mb = _run(["run", *map(str, many), "--brief", "--pdf", str(out / "c100.pdf"), "--force"])
    print(f"tea run CASE --brief                     {brief:7.2f} s")
    print(f"tea run CASE --brief --pdf               {page:7.2f} s  = {page / brief:4.1f} x --brief (target <= 2.5)"
          f"   peak {page_mb:5.0f} MB")
    print(f"comparison of {len(CASES)} cases, PDF            {three:7.2f} s  (target <= 5 s)"
          f"             peak {three_mb:5.0f} MB")
    print(f"comparison of {args.cases} cases, PDF          {big:7.2f} s  (target <= 60 s)"
          f"            peak {big_mb:5.0f} MB (target <= 1,024)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
