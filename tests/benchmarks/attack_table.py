"""The reliability attack's table, redone with the project's own generators, through the command line.

For each kind of input it generates examples (hypothesis, derandomised, so
every run draws the same ones), runs ``tea`` on each in this process and
counts how each ended: a clear error with exit status 2 (one line per
problem, no traceback), accepted with exit 0 (for a field table: with or
without skipped rows), or a failure (exit 1, a traceback, an internal error,
a control character on the terminal, a formula cell in an output, NaN in
JSON). Prints one Markdown table. Not a test: it takes a few minutes.

    python tests/benchmarks/attack_table.py [--scale 1.0]
"""

from __future__ import annotations

import argparse
import collections
import json
import math
import re
import sys
import tempfile
import time
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import hypothesis.strategies as st  # noqa: E402
from hypothesis import HealthCheck, given, settings  # noqa: E402

import test_property as cases_gen  # noqa: E402
import test_property_files as files_gen  # noqa: E402
from conftest import CASES_DIR, run_cli, to_toml  # noqa: E402

SETTINGS = dict(deadline=None, derandomize=True, database=None,
                suppress_health_check=list(HealthCheck))
CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")
BASE = CASES_DIR / "clay_corner_miscanthus.toml"
TALLY: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
FAILURES: dict[str, list[str]] = collections.defaultdict(list)


def record(kind: str, result, extra_failure: str = "") -> str:
    clean = "Traceback" not in result.err and "internal error" not in result.err \
        and not CONTROL.search(result.out + result.err) and not extra_failure
    machine = result.code == 1 and clean and all(line.startswith("error: ") for line in result.err_lines) \
        and re.search(r"is a folder|cannot write the file", result.err)
    if machine:  # the machine refused a write: one line naming the file, exit 1 by design
        outcome = "exit 1"
    elif result.code not in (0, 2) or not clean:
        outcome = "failure"
        FAILURES[kind].append(f"exit {result.code}: {extra_failure or result.err[-300:]}")
    elif result.code == 2:
        outcome = "exit 2"
    else:
        outcome = "ok"
    TALLY[kind]["tried"] += 1
    TALLY[kind][outcome] += 1
    return outcome


def case_files(n: int, folder: Path) -> None:
    @settings(max_examples=n, **SETTINGS)
    @given(st.one_of(cases_gen.mutated_cases(), cases_gen.garbage_texts()))
    def run(data):
        path = folder / "case.toml"
        path.write_text(data if isinstance(data, str) else to_toml(data), encoding="utf-8", errors="surrogatepass")
        result = run_cli(["run", path, "--json"])
        problem = ""
        if result.code == 0:
            try:
                json.loads(result.out, parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
            except ValueError as exc:
                problem = f"JSON: {exc}"
        record("case files (mutated and garbage TOML)", result, problem)
    run()


def field_tables(n: int, folder: Path) -> None:
    @settings(max_examples=n, **SETTINGS)
    @given(files_gen.field_tables())
    def run(table):
        path = folder / "fields.csv"
        path.write_bytes(table[0])
        out = folder / "ranked.csv"
        result = run_cli(["screen", path, "--case", BASE, "--out", out, "--no-progress", "--force"])
        problem = ""
        if result.code == 0:
            for line in out.read_text(encoding="utf-8").splitlines():
                if not line.startswith("#"):
                    for cell in next(iter(__import__("csv").reader([line])), []):
                        if files_gen.FORMULA_START.match(cell) and not files_gen.PLAIN_NUMBER.fullmatch(cell):
                            problem = f"formula cell {cell[:40]!r}"
        kind = "field tables"
        outcome = record(kind, result, problem)
        if outcome == "ok" and "rows skipped" in result.out and not re.search(r"\b0 rows skipped", result.out):
            TALLY[kind]["ok, rows skipped"] += 1
    run()


def workbooks(n: int, folder: Path) -> None:
    parts = files_gen.small_book_parts(folder)

    @settings(max_examples=n, **SETTINGS)
    @given(files_gen.tamperings())
    def run(ops):
        data, _, _ = files_gen._apply(parts, ops)
        path = folder / "book.xlsx"
        path.write_bytes(data)
        record("tampered workbooks", run_cli(["check", path]))
    run()


PAYLOADS = ['=HYPERLINK("http://x.invalid","click")', "+cmd|' /C calc'!A0", "@SUM(1+1)", "-2+3", "\t=1", "\r=1",
            "\x1b]0;owned\x07", "\x1b[2J", "\x00\x08\x7f", "\u202eevil", "_x001B_", "<script>x</script>", "&amp;",
            "\ud800"]


def injections(n: int, folder: Path) -> None:
    """Payloads in a case's name and field name, through the terminal, the workbook and a screen's outputs."""
    import tomllib

    base = tomllib.loads(BASE.read_text(encoding="utf-8"))

    @settings(max_examples=n, **SETTINGS)
    @given(st.lists(st.sampled_from(PAYLOADS), min_size=1, max_size=3).map("".join), st.text(max_size=6))
    def run(payload, noise):
        text = (noise + payload).encode("utf-8", "replace").decode("utf-8")
        data = dict(base, case=dict(base["case"], name=text or "x"), field=dict(base["field"], name=text or "x"))
        path = folder / "inj.toml"
        path.write_text(to_toml(data), encoding="utf-8")
        book = folder / "inj.xlsx"
        result = run_cli(["run", path, "--brief", "--xlsx", book, "--force"])
        problem = ""
        if result.code == 0:
            with zipfile.ZipFile(book) as zf:
                inputs = zf.read("xl/worksheets/sheet1.xml").decode()
            if re.search(r"<f>[^<]*(HYPERLINK|cmd|SUM\(1)", inputs):
                problem = "formula in the workbook"
            again = run_cli(["check", book])
            if again.code != 0 or "hash" not in again.out:
                problem = problem or "the workbook does not read back"
        record("injection: case text to terminal and workbook", result, problem)
        table = folder / "inj.csv"
        quoted = '"' + text.replace('"', '""') + '"'
        table.write_text(f"field_id,field.name,area_ha,site_factor\n{quoted},{quoted},5,0.9\nF2,{quoted},6,1.1\n",
                         encoding="utf-8")
        for out in ("inj.out.csv", "inj.out.xlsx"):
            result = run_cli(["screen", table, "--case", BASE, "--out", folder / out, "--force", "--no-progress"])
            problem = ""
            if result.code == 0 and out.endswith(".xlsx"):
                with zipfile.ZipFile(folder / out) as zf:
                    if "<f>" in zf.read("xl/worksheets/sheet1.xml").decode():
                        problem = "formula in the ranked xlsx"
            elif result.code == 0:
                for line in (folder / out).read_text(encoding="utf-8").splitlines():
                    if not line.startswith("#"):
                        for cell in next(iter(__import__("csv").reader([line])), []):
                            if files_gen.FORMULA_START.match(cell) and not files_gen.PLAIN_NUMBER.fullmatch(cell):
                                problem = f"formula cell {cell[:40]!r}"
            record("injection: field ids and names to screen outputs", result, problem)
    run()


def outputs(folder: Path) -> None:
    """Output targets: bad suffixes, clashes, folders, inputs named as outputs."""
    (folder / "a_folder").mkdir(exist_ok=True)
    (folder / "b.xlsx").mkdir(exist_ok=True)
    case = folder / "case.toml"
    case.write_bytes(BASE.read_bytes())
    runs = []
    for flag, good in (("--xlsx", "x.xlsx"), ("--pdf", "x.pdf"), ("--html", "x.html")):
        for bad in ("same.pdf", "book.txt", "book.xls", "a_folder", "b.xlsx", "case.toml", "no/such/dir/x" + good[1:],
                    "", good.upper()):
            runs.append(["run", case, "--brief", flag, bad])
        runs.append(["run", case, "--brief", flag, good, "--xlsx" if flag != "--xlsx" else "--pdf", good])
    for bad in ("x.txt", "case.toml", "a_folder", "x.csv"):
        runs.append(["sensitivity", case, "--no-surface", "--plot", bad])
        runs.append(["screen", CASES_DIR / "fields_demo.csv", "--case", case, "--out", bad, "--errors", "x.csv"])
    for argv in runs:
        result = run_cli(argv, cwd=folder)
        wrote = [p.name for p in folder.iterdir() if p.name.startswith("x.") or p.name.startswith("same")]
        problem = f"wrote {wrote}" if result.code != 0 and wrote else ""
        if record("output targets", result, problem) == "ok":
            print("accepted:", " ".join(str(a) for a in argv[2:]), file=sys.stderr)
        for p in folder.iterdir():
            if p.is_file() and p.name != "case.toml":
                p.unlink()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--scale", type=float, default=1.0, help="examples as a share of the default counts")
    args = parser.parse_args()
    counts = {"cases": 2000, "tables": 1000, "books": 1000, "inject": 100}
    counts = {k: max(1, int(v * args.scale)) for k, v in counts.items()}
    start = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        case_files(counts["cases"], folder)
        field_tables(counts["tables"], folder)
        workbooks(counts["books"], folder)
        injections(counts["inject"], folder)
        (folder / "out").mkdir()
        outputs(folder / "out")
    print("| input | tried | clear error, exit 2 | clear error, exit 1 (machine) | accepted, exit 0 "
          "| of which rows skipped | failures |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for kind, c in TALLY.items():
        print(f"| {kind} | {c['tried']:,} | {c['exit 2']:,} | {c['exit 1'] or ''} | {c['ok']:,} "
              f"| {c['ok, rows skipped'] or ''} | {c['failure']:,} |")
    for kind, items in FAILURES.items():
        for item in items[:5]:
            print(f"failure ({kind}): {item}", file=sys.stderr)
    print(f"({time.perf_counter() - start:.0f} s)", file=sys.stderr)


if __name__ == "__main__":
    main()
