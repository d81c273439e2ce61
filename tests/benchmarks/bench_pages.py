"""How long the printed summary takes, whole process, as a user runs it.

Run from the repository root:

    python tests/benchmarks/bench_pages.py [--repeat N] [--cases N] [--baseline DIR]

Each timing is a fresh ``python -m tea`` process (imports, loading, computing,
laying out and writing included), measured side by side in this one run
(time.perf_counter around the process, median of N repeats):

* ``tea run CASE --brief``: the terminal summary, the yardstick;
* ``tea run CASE --brief --pdf OUT.pdf``: the grower's page, printed as a
  multiple of the yardstick (target <= 2.5x): each repeat runs the two one
  right after the other, and the median of the repeats' ratios is printed
  beside the ratio of the medians;
* a comparison of the three demo cases as PDF (target <= 5 s);
* a comparison of 100 cases as PDF (target <= 60 s), with the peak resident
  memory (target <= 1 GB).

Memory: a comparison is made in worker processes (``TEA_JOBS``, default one
per core), so the peak is given as the largest sum of the memory of the
process and all its workers, read from ``/proc`` every 20 ms (proportional
set sizes: memory the forked workers still share with their parent counts
once), beside the peak resident memory of the largest single process
(``ru_maxrss`` from ``os.wait4``). Each line also
gives the processor time of the whole process tree (user + system) and the
wall time as a multiple of ``--brief``: on a shared machine that ratio, not
the seconds, is what a change is judged by.

The seconds depend on the machine: how long ``sum(range(10**6))`` takes in the
same interpreter is printed beside them (about 12-15 ms on a current desktop
processor, from memory), so that runs on different machines can be read
against each other; the ratios to ``--brief`` depend on it far less.

The 100 cases are the demo cases (demo data) copied with their names, areas
and prices varied, written to a temporary folder. This is a benchmark, never
a timed test: it prints what it measured and exits 0.

``--baseline DIR`` measures a second copy of the project beside this one, in
the same run, each measurement taken in turn from one and the other (the same
case files, the same interpreter): e.g. an earlier commit laid out with
``git archive REV | tar -x -C DIR`` and ``ln -s ../templates DIR/tea/templates``
(so that its own templates are used, not the installed ones). It prints both
and the ratio of this copy to the baseline.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

from conftest import to_toml  # noqa: E402

CASES = sorted((ROOT / "cases").glob("*.toml"))
CASE = ROOT / "cases" / "clay_corner_miscanthus.toml"


def _tree_memory_mb(pid: int) -> float:
    """Memory [MB] of a process and all its descendants, now: the sum of their proportional set sizes
    (``Pss`` in Linux ``/proc/PID/smaps_rollup``: a page shared by n processes counts 1/n in each)."""
    total, todo = 0, [pid]
    while todo:
        p = todo.pop()
        try:
            with open(f"/proc/{p}/smaps_rollup", encoding="ascii") as f:
                total += next((int(line.split()[1]) for line in f if line.startswith("Pss:")), 0)
            for task in os.listdir(f"/proc/{p}/task"):
                with open(f"/proc/{p}/task/{task}/children", encoding="ascii") as f:
                    todo.extend(int(c) for c in f.read().split())
        except (OSError, ValueError):
            continue  # the process has just ended
    return total / 1024.0


class _Run:
    """One ``python -m tea`` process: wall time [s], processor time of the tree [s], peak memory [MB]."""

    def __init__(self, args: list[str], root: Path = ROOT):
        env = dict(os.environ, MPLBACKEND="Agg")
        t0 = time.perf_counter()
        proc = subprocess.Popen([sys.executable, "-m", "tea", *args], cwd=root, env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        peak = [0.0]
        done = threading.Event()

        def sample() -> None:
            while not done.wait(0.02):
                peak[0] = max(peak[0], _tree_memory_mb(proc.pid))

        sampler = threading.Thread(target=sample, daemon=True)
        sampler.start()
        _pid, status, usage = os.wait4(proc.pid, 0)
        self.seconds = time.perf_counter() - t0
        done.set()
        sampler.join()
        err = proc.stderr.read().decode()
        proc.stderr.close()
        if os.waitstatus_to_exitcode(status) != 0:
            raise SystemExit(f"tea {' '.join(args)} failed:\n{err}")
        self.cpu = usage.ru_utime + usage.ru_stime  # the process and the workers it waited for
        self.tree_mb = peak[0]
        self.one_mb = usage.ru_maxrss / 1024.0  # Linux: kB; the largest of the process and its workers


def _median(runs: list[_Run]) -> _Run:
    runs = sorted(runs, key=lambda r: r.seconds)
    middle = runs[len(runs) // 2]
    middle.tree_mb = max(r.tree_mb for r in runs)
    middle.one_mb = max(r.one_mb for r in runs)
    return middle


def _measure(args: list[str], repeat: int, roots: list[Path]) -> list[_Run]:
    """The median run of ``tea ARGS`` from each root, the roots taken in turn (order swapped each repeat)."""
    runs: dict[Path, list[_Run]] = {r: [] for r in roots}
    for k in range(repeat):
        for root in (roots if k % 2 == 0 else roots[::-1]):
            runs[root].append(_Run([a.replace("{root}", root.name) for a in args], root))
    return [_median(runs[r]) for r in roots]


def _measure_pairs(first: list[str], second: list[str], repeat: int, roots: list[Path]
                   ) -> tuple[list[_Run], list[_Run], list[float]]:
    """``tea FIRST`` and ``tea SECOND`` run one right after the other, ``repeat`` times from each root (order of
    the roots swapped each repeat): the median run of each, and per root the median of the repeats' ratios
    second / first, each taken from two runs seconds apart (a shared machine's load changes less in between)."""
    runs: dict[Path, tuple[list[_Run], list[_Run]]] = {r: ([], []) for r in roots}
    for k in range(repeat):
        for root in (roots if k % 2 == 0 else roots[::-1]):
            for args, into in ((first, runs[root][0]), (second, runs[root][1])):
                into.append(_Run([a.replace("{root}", root.name) for a in args], root))
    ratios = [statistics.median(b.seconds / a.seconds for a, b in zip(*runs[r])) for r in roots]
    return [_median(runs[r][0]) for r in roots], [_median(runs[r][1]) for r in roots], ratios


def _templates_of(root: Path) -> Path:
    out = subprocess.run([sys.executable, "-c", "import importlib.resources as r; print(r.files('tea.templates'))"],
                         cwd=root, capture_output=True, text=True, check=True).stdout.strip()
    return Path(out).resolve()


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


def _sum_ms() -> float:
    """Milliseconds this interpreter takes for sum(range(10**6)): the seconds above read against it."""
    import timeit

    return 1000.0 * min(timeit.repeat("sum(range(10**6))", number=1, repeat=5))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="repeats of the short timings (median kept)")
    parser.add_argument("--cases", type=int, default=100, help="cases in the large comparison")
    parser.add_argument("--baseline", type=Path, help="another copy of the project, measured in turn with this one")
    args = parser.parse_args(argv)
    roots = [ROOT]
    if args.baseline is not None:
        base = args.baseline.resolve()
        if not (base / "tea" / "__main__.py").is_file():
            raise SystemExit(f"--baseline {base}: expected a copy of the project (tea/__main__.py)")
        if not _templates_of(base).is_relative_to(base):
            raise SystemExit(f"--baseline {base}: its templates resolve outside it; "
                             f"ln -s ../templates {base / 'tea' / 'templates'}")
        roots.append(base)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        for root in roots:
            (out / root.name).mkdir(exist_ok=True)
        pdf = str(out / "{root}")
        brief, page, paired = _measure_pairs(["run", str(CASE), "--brief"],
                                             ["run", str(CASE), "--brief", "--pdf", pdf + "/a.pdf", "--force"],
                                             args.repeat, roots)
        three = _measure(["run", *map(str, CASES), "--brief", "--pdf", pdf + "/c3.pdf", "--force"], args.repeat,
                         roots)
        many = _many_cases(out, args.cases)
        big = _measure(["run", *map(str, many), "--brief", "--pdf", pdf + "/c100.pdf", "--force"], 1, roots)
    jobs = os.environ.get("TEA_JOBS") or f"{len(os.sched_getaffinity(0))} (cores)"
    print(f"workers: {jobs}; load average at the end: {os.getloadavg()[0]:.1f}; this machine's speed: "
          f"sum(range(10**6)) in {_sum_ms():.1f} ms (best of 5)")
    rows = [(f"tea run CASE --brief", brief, ""),
            (f"tea run CASE --brief --pdf", page, "<= 2.5 x --brief"),
            (f"comparison of {len(CASES)} cases, PDF", three, "<= 5 s"),
            (f"comparison of {args.cases} cases, PDF", big, "<= 60 s, <= 1,024 MB")]
    for k, root in enumerate(roots):
        print(f"\n{'this copy' if k == 0 else 'baseline'}: {root}")
        print(f"{'':40}{'wall':>9}{'x brief':>9}{'cpu':>9}{'peak, tree':>12}{'one proc':>10}   target")
        for label, r, target in rows:
            print(f"{label:40}{r[k].seconds:8.2f}s{r[k].seconds / brief[k].seconds:8.1f}x{r[k].cpu:8.2f}s"
                  f"{r[k].tree_mb:9.0f} MB{r[k].one_mb:7.0f} MB   {target}")
        print(f"{'--pdf / --brief, median of the runs taken in pairs':56}{paired[k]:9.2f}x   <= 2.5 x")
    if len(roots) > 1:
        print("\nthis copy / baseline" + " " * 20 + f"{'wall':>9}{'x brief':>9}{'cpu':>9}{'peak, tree':>12}")
        for label, r, _target in rows:
            print(f"{label:40}{r[0].seconds / r[1].seconds:9.2f}"
                  f"{(r[0].seconds / brief[0].seconds) / (r[1].seconds / brief[1].seconds):9.2f}"
                  f"{r[0].cpu / r[1].cpu:9.2f}{r[0].tree_mb / r[1].tree_mb:12.2f}")
    return 0

if __name__ == "__main__":
    sys.exit(main())
