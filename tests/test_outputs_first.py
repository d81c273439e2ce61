"""Every requested file is written before anything is printed, and a closed pipe ends only the printing.

Sources named beside each check:

* POSIX (The Open Group Base Specifications, write(): EPIPE): a write to a
  pipe whose reading end is closed fails; Python, which ignores SIGPIPE,
  raises BrokenPipeError. A reader such as ``head -3`` closes its end early.
* bash's ``pipefail`` option (GNU Bash manual, "Pipelines"): the pipeline's
  status is that of the last command that failed, so ``tea``'s own status is seen.
* common practice: a command-line tool's diagnostics go to stderr, and a
  reader that stops reading is not an error of the writer.
"""

from __future__ import annotations

import shlex
import subprocess
import sys

from conftest import CASES_DIR, ROOT, run_cli

CASE = CASES_DIR / "clay_corner_miscanthus.toml"


def test_head_of_the_summary_still_writes_the_pdf(tmp_path):
    pdf = tmp_path / "a.pdf"
    command = f"set -o pipefail; {shlex.quote(sys.executable)} -m tea run {shlex.quote(str(CASE))} " \
              f"--pdf {shlex.quote(str(pdf))} | head -3"
    proc = subprocess.run(["bash", "-c", command], capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert len(proc.stdout.splitlines()) == 3
    assert pdf.read_bytes().startswith(b"%PDF-")  # ISO 32000-1 sec. 7.5.2: a PDF file starts with %PDF-
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr


def test_a_reader_gone_before_the_first_line_costs_no_file(tmp_path):
    """stdout closed before tea prints: every file is written anyway, the status is 0, no traceback."""
    html, xlsx = tmp_path / "b.html", tmp_path / "c.xlsx"
    proc = subprocess.Popen([sys.executable, "-m", "tea", "run", str(CASE), "--html", str(html), "--xlsx", str(xlsx)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=ROOT)
    proc.stdout.close()  # the reader goes away at once: tea's first write to stdout meets EPIPE
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=300) == 0, err
    assert html.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert xlsx.read_bytes()[:2] == b"PK"  # ECMA-376 Part 2: an xlsx package is a ZIP file (local header "PK")
    assert "Traceback" not in err and "Exception ignored" not in err
    # the files were announced on stderr before any result went to stdout
    assert f"wrote {html}" in err and f"wrote {xlsx}" in err


def test_an_xls_name_is_refused_before_any_work(tmp_path):
    res = run_cli(["run", CASE, "--xlsx", tmp_path / "book.xls"])
    assert res.code == 2
    assert len(res.err_lines) == 1 and "book.xls" in res.err and ".xlsx" in res.err
    assert not (tmp_path / "book.xls").exists() and res.out == ""
