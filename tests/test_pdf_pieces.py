"""A comparison made in pieces: worker processes, results in order, PDFs joined into one.

Sources named beside each check:

* the operating system's process ids (:func:`os.getpid`) tell which process
  made a piece;
* poppler-utils (pdfinfo, pdftotext, pdffonts) read the joined PDF as any
  viewer would: page count, metadata, text, embedded fonts;
* pypdf reads the pieces' PDFs as written by WeasyPrint.

Demo cases are invented data: they are inputs here, never check values.
"""

from __future__ import annotations

import os
import shutil
import subprocess

import pytest

import tea
from tea.core.errors import OutputError
from tea.outputs import pdf, report, workers

from conftest import DEMO_CASES

POPPLER = all(shutil.which(t) for t in ("pdfinfo", "pdftotext", "pdffonts"))


def _square_and_pid(i: int) -> tuple[int, int]:
    return i * i, os.getpid()


def test_pieces_come_back_in_order_from_worker_processes(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    got = list(workers.each(6, _square_and_pid))
    assert [v for v, _ in got] == [0, 1, 4, 9, 16, 25]
    pids = {p for _, p in got}
    assert os.getpid() not in pids  # os.getpid: made in other processes, two at most
    assert 1 <= len(pids) <= 2


def test_one_job_makes_every_piece_in_this_process(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "1")
    got = list(workers.each(3, _square_and_pid))
    assert got == [(0, os.getpid()), (1, os.getpid()), (4, os.getpid())]


def _fails_at_two(i: int) -> int:
    if i == 2:
        raise ValueError("piece 2 cannot be made")
    return i


def test_a_failing_piece_ends_the_whole_with_its_error(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    with pytest.raises(ValueError, match="piece 2 cannot be made"):
        list(workers.each(5, _fails_at_two))


_PARENT = os.getpid()


def _square_unless_killed(i: int) -> tuple[int, int]:
    if i == 2 and os.getpid() != _PARENT:
        os._exit(9)  # stands in for a worker killed without an answer (out of memory, kill -9)
    return i * i, os.getpid()


def test_pieces_whose_worker_is_killed_are_made_here_and_the_run_does_not_wait(monkeypatch):
    """A worker killed mid-comparison once left the run waiting for ever (the lost piece was never made
    again). Now every piece comes back, in order: those not yet taken are made in this process."""
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    got = list(workers.each(6, _square_unless_killed))
    assert [v for v, _ in got] == [0, 1, 4, 9, 16, 25]
    assert got[2][1] == os.getpid() and got[0][1] != os.getpid()  # os.getpid: where each piece was made


_WORKER_OF_A_KILLED_PARENT = """
import os, sys, time
sys.path.insert(0, {root!r})
from tea.outputs import workers
os.environ[workers.JOBS_VARIABLE] = "2"
assert workers.stand_by("colorsys")
print(workers._standing["work"].process.pid, flush=True)
time.sleep(60)
"""


def test_a_worker_ends_when_the_command_is_killed_outright(tmp_path):
    """kill -9 of the command once left its workers waiting for work for good (holding memory, and the
    terminal's output open so that `tea ... | cat` never ended). The kernel now ends them with it (Linux
    prctl PR_SET_PDEATHSIG): /proc shows the worker gone or a zombie within seconds."""
    import signal
    import sys
    import time
    from pathlib import Path

    root = str(Path(workers.__file__).resolve().parents[2])
    parent = subprocess.Popen([sys.executable, "-c", _WORKER_OF_A_KILLED_PARENT.format(root=root)],
                              stdout=subprocess.PIPE, text=True)
    worker = int(parent.stdout.readline())
    assert Path(f"/proc/{worker}").exists()
    parent.send_signal(signal.SIGKILL)
    parent.wait(timeout=10)

    def alive() -> bool:
        try:
            return Path(f"/proc/{worker}/stat").read_text().split(") ", 1)[1][0] != "Z"
        except (OSError, IndexError):
            return False

    deadline = time.monotonic() + 10
    while alive() and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not alive(), f"worker {worker} outlived the command"


def test_work_made_meanwhile_comes_from_a_worker_while_this_process_goes_on(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    with workers.meanwhile(lambda: _square_and_pid(7)) as result:
        here = os.getpid()  # this process goes on; the result is asked for afterwards
        value, pid = result()
    assert value == 49 and pid != here  # os.getpid: made in another process


def test_work_made_meanwhile_with_one_job_is_made_here_and_its_error_comes_back(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "1")
    with workers.meanwhile(lambda: _square_and_pid(3)) as result:
        assert result() == (9, os.getpid())
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    with pytest.raises(ValueError, match="piece 2 cannot be made"):
        with workers.meanwhile(lambda: _fails_at_two(2)) as result:
            result()


def test_work_whose_worker_dies_is_made_in_this_process(monkeypatch):
    """A worker killed without an answer (os._exit stands in for the out-of-memory killer) does not leave the
    run waiting: the work is made here instead."""
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    here = os.getpid()

    def work() -> int:
        if os.getpid() != here:
            os._exit(9)
        return os.getpid()

    with workers.meanwhile(work) as result:
        assert result() == here


def test_a_page_is_the_same_whether_its_charts_are_drawn_in_a_worker_or_here(tmp_path, monkeypatch):
    case = tea.load_case(DEMO_CASES[0])
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    made = {}
    for jobs in ("1", "2"):
        monkeypatch.setenv(workers.JOBS_VARIABLE, jobs)
        made[jobs] = report.render_summary(case, frame, res, tmp_path / f"p{jobs}.pdf").read_bytes()
    assert made["1"] == made["2"]


@pytest.mark.parametrize("given", ["0", "two", "-1", "1.5"])
def test_jobs_from_the_environment_must_be_a_whole_number(monkeypatch, given):
    monkeypatch.setenv(workers.JOBS_VARIABLE, given)
    with pytest.raises(OutputError, match="TEA_JOBS: expected a whole number"):
        workers.available()


@pytest.mark.parametrize("given", ["abc", "0"])
def test_a_bad_jobs_value_for_one_page_is_one_line_and_status_2(monkeypatch, tmp_path, given):
    """The command line starts a page's workers before anything else: a bad TEA_JOBS there once gave a
    traceback (status 1) instead of the one-line error every other bad input gets."""
    from conftest import CASES_DIR, run_cli

    monkeypatch.setenv(workers.JOBS_VARIABLE, given)
    res = run_cli(["run", CASES_DIR / "clay_corner_miscanthus.toml", "--pdf", tmp_path / "a.pdf"])
    assert res.code == 2 and "Traceback" not in res.err
    assert res.err.strip().splitlines() == [f"error: TEA_JOBS: expected a whole number of worker processes "
                                            f"(1 or more), got {given!r}"]
    assert not list(tmp_path.iterdir())


def _run(*cmd: str) -> str:
    return subprocess.run(cmd, check=True, capture_output=True, text=True).stdout


@pytest.mark.skipif(not POPPLER, reason="poppler-utils (pdfinfo, pdftotext, pdffonts) not installed")
def _demos(n: int):
    """The first n demo cases, their ledgers and figures, as three lists."""
    cases = [tea.load_case(path) for path in DEMO_CASES[:n]]
    frames = [tea.build_ledger(case) for case in cases]
    return cases, frames, [tea.summarise(case, frame) for case, frame in zip(cases, frames)]


def _by_jobs(cases, frames, results, tmp_path, monkeypatch) -> dict:
    """The comparison written with one worker and with two: {"1": path, "2": path}."""
    made = {}
    for jobs in ("1", "2"):
        monkeypatch.setenv(workers.JOBS_VARIABLE, jobs)
        report._fit_cache.clear()
        made[jobs] = report.render_comparison(cases, frames, results, tmp_path / f"jobs{jobs}.pdf")
    return made


def test_comparison_bytes_do_not_depend_on_the_number_of_workers(tmp_path, monkeypatch):
    cases, frames, results = _demos(2)
    made = _by_jobs(cases, frames, results, tmp_path, monkeypatch)
    assert made["1"].read_bytes() == made["2"].read_bytes()
    info = dict(line.split(":", 1) for line in _run("pdfinfo", str(made["2"])).splitlines() if ":" in line)
    assert info["Pages"].strip() == "3"  # the overview, then one page per case
    assert info["Title"].strip() == "Comparison of 2 cases"  # the first piece's metadata
    assert all(r.case_hash in info["Subject"] for r in results)
    text = _run("pdftotext", str(made["2"]), "-")
    assert text.index("2 cases side by side") < text.index(cases[0].name) and cases[1].name in text
    fonts = _run("pdffonts", str(made["2"])).splitlines()[2:]
    assert fonts and all(line.split()[-5] == "yes" for line in fonts)  # every font embedded


def test_join_keeps_the_pages_in_order(tmp_path):
    from pypdf import PdfReader

    one = pdf.write_pdf(pdf.layout("<title>first</title><p>page one</p>"))
    two = pdf.write_pdf(pdf.layout("<title>second</title><p>page two</p><p style='break-before: page'>three</p>"))
    target = tmp_path / "joined.pdf"
    pdf.join([one, two], target)
    reader = PdfReader(target)  # pypdf reads the joined file
    assert [p.extract_text().strip() for p in reader.pages] == ["page one", "page two", "three"]
    assert reader.metadata["/Title"] == "first"


def test_case_pages_written_together_in_one_piece_keep_their_order_and_fit(tmp_path, monkeypatch):
    """Pages per piece as a comparison of many cases takes them (here two of three, so that one piece holds
    several pages): the same file with one worker or two; poppler reads each case page on its own sheet,
    in order, each saying which case of how many it is."""
    cases, frames, results = _demos(3)
    assert report.pages_per_piece(3) == 1 and report.pages_per_piece(100) == report.MOST_PAGES_PER_PIECE
    monkeypatch.setattr(report, "pages_per_piece", lambda n: 2)
    made = _by_jobs(cases, frames, results, tmp_path, monkeypatch)
    assert made["1"].read_bytes() == made["2"].read_bytes()
    info = dict(line.split(":", 1) for line in _run("pdfinfo", str(made["2"])).splitlines() if ":" in line)
    assert info["Pages"].strip() == "4"
    for k, case in enumerate(cases, start=2):
        page = _run("pdftotext", "-f", str(k), "-l", str(k), str(made["2"]), "-")
        assert case.name in page and f"case {k - 1} of 3" in page


def _pid_and_modules(tag: str) -> tuple[str, int, bool]:
    import sys

    return tag, os.getpid(), "colorsys" in sys.modules


def _raises_value_error(text: str) -> None:
    raise ValueError(text)


def _here_or_end(here: int) -> int:
    if os.getpid() != here:
        os._exit(9)  # stands in for a worker killed without an answer (out of memory)
    return here


def test_the_worker_standing_by_loads_its_modules_and_makes_the_work_handed_over(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    assert workers.stand_by("colorsys")  # a small standard-library module this process need not load
    try:
        tag, pid, loaded = workers.elsewhere(_pid_and_modules, "a")()
    finally:
        workers.stand_down()
    assert (tag, loaded) == ("a", True) and pid != os.getpid()  # os.getpid: made in the other process


def test_the_worker_standing_by_sends_back_the_error_of_its_work(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    assert workers.stand_by("colorsys")
    with pytest.raises(ValueError, match="no such chart"):
        workers.elsewhere(_raises_value_error, "no such chart")()


def test_work_whose_standing_by_worker_dies_is_made_in_this_process(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "2")
    here = os.getpid()
    assert workers.stand_by("colorsys")
    assert workers.elsewhere(_pid_and_modules, "b")()[1] != here
    # a standing-by worker that dies: the work is made here, and the run does not wait for it
    assert workers.stand_by("colorsys")
    assert workers.elsewhere(_here_or_end, here)() == here


def test_no_worker_stands_by_with_one_job(monkeypatch):
    monkeypatch.setenv(workers.JOBS_VARIABLE, "1")
    assert not workers.stand_by("colorsys")
    assert workers.elsewhere(_pid_and_modules, "c")()[1] == os.getpid()


@pytest.mark.parametrize("argv, one", [
    (["run", "a.toml", "--pdf", "a.pdf"], True),
    (["run", "--html=a.html", "a.toml", "--brief"], True),
    (["run", "--pdf", "x.pdf", "--page-size", "A4", "a.toml", "--force"], True),
    (["run", "a.toml", "b.toml", "--pdf", "c.pdf"], False),  # a comparison: its workers are forked later
    (["run", "a.toml", "--xlsx", "a.xlsx"], False),
    (["check", "a.toml", "--pdf"], False),
    ([], False),
])
def test_the_command_line_is_read_ahead_for_one_page(argv, one):
    from tea.cli.main import _one_page

    assert _one_page(argv) is one
