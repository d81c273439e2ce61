"""The `tea` command line: parse arguments, call the library, print. No arithmetic here.

Exit status, from one table (:data:`EXIT_STATUS`): 0 done; 2 bad input or usage
(every problem printed, one line each, no traceback); 1 the machine refused
(no permission, disk full, a folder where a file should go, not enough memory:
one line naming the file); 1 also for an unexpected internal error (one line;
set TEA_DEBUG=1 for the traceback). Everything printed goes through
:func:`tea.core.safe_text.terminal`, so no case text can drive the terminal.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from functools import lru_cache
from pathlib import Path
from typing import Sequence

from tea import __version__
from tea.cli import analysis as analysis_cli
from tea.cli import explain as explain_cli
from tea.cli import yield_cli
from tea.cli.common import SafeStream, check_outputs as _check_outputs, load_all as _load_all
from tea.cli.common import quiet_stdout as _quiet_stdout, say as _say, warn
from tea.core.files import promised
from tea.core.texts import fitted, on_terminal
from tea.core.errors import (INTERRUPTED, INTERRUPTED_MESSAGE, CaseError, OutputError, ReadRefused, TeaError,
                             WriteError)

#: each exception class the command line expects, and its exit status (the first match wins)
EXIT_STATUS: tuple[tuple[type[BaseException], int], ...] = (
    (ReadRefused, 1),  # the machine refused an input: permission, an input/output error
    (CaseError, 2),  # bad input: a case, a field table, a workbook read back
    (OutputError, 2),  # an output asked for wrongly: exists, unknown type, two outputs in one file
    (WriteError, 1),  # the machine refused an output: permission, disk full, a folder in the way
    (TeaError, 2),
    (MemoryError, 1),
    (OSError, 1),
)
#: what is printed of one error line at most (an offending value itself is cut to ~80 characters where it is quoted)
ERROR_LINE_LIMIT = 1000


def _unused_options(args: argparse.Namespace) -> None:
    """A warning for each option of `tea run` that shapes only output files when none is asked for: it would
    change nothing, and the user should not think it did."""
    files = {"--sensitivity": (args.sensitivity, (args.pdf, args.html, args.xlsx), "--pdf, --html or --xlsx",
                               "; `tea sensitivity CASE` shows what moves the NPV here"),
             "--page-size": (args.page_size, (args.pdf, args.html), "--pdf or --html", "")}
    for option, (given, outputs, wanted, hint) in files.items():
        if given and not any(outputs):
            warn(f"{option} shapes only the files {wanted} write, and none is asked for{hint}")


def _cmd_run(args: argparse.Namespace) -> int:
    from tea.outputs import terminal
    from tea.model.ledger import build_ledger
    from tea.model.results import summarise

    cases = _load_all(args.cases)
    ledgers, results = [], []
    _check_outputs([(args.xlsx, (".xlsx",)), (args.pdf, (".pdf",)), (args.html, (".html", ".htm"))], args.force,
                   inputs=args.cases)
    promised([args.xlsx, args.pdf, args.html])  # an interrupt names those not written yet
    sensitivity = True if args.sensitivity else None  # None: where a case has a [sensitivity] section
    _unused_options(args)
    for case in cases:
        for w in case.warnings:
            warn(w)
        frame = build_ledger(case)
        ledgers.append(frame)
        results.append(summarise(case, frame))
    # every file first: a reader that stops reading stdout early cannot cost an output
    if args.xlsx:
        from tea.outputs.workbook import write_portfolio, write_workbook

        if len(cases) == 1:
            write_workbook(cases[0], ledgers[0], results[0], args.xlsx, force=args.force, sensitivity=sensitivity)
        else:
            write_portfolio(cases, ledgers, results, args.xlsx, force=args.force, sensitivity=sensitivity)
        print(f"wrote {args.xlsx}", file=sys.stderr)
    for out, kind in ((args.pdf, "pdf"), (args.html, "html")):
        if out:
            from tea.outputs.report import render_comparison, render_summary

            if len(cases) == 1:
                render_summary(cases[0], ledgers[0], results[0], out, force=args.force, page_size=args.page_size,
                               sensitivity=sensitivity)
            else:
                render_comparison(cases, ledgers, results, out, force=args.force, page_size=args.page_size,
                                  sensitivity=sensitivity)
            print(f"wrote {out}", file=sys.stderr)
    if args.json:
        payload = [terminal.json_payload(c, f, r) for c, f, r in zip(cases, ledgers, results)]
        _say(json.dumps(payload[0] if len(payload) == 1 else payload, indent=2, allow_nan=False))
    else:
        if len(cases) > 1:
            from tea.outputs import side_by_side

            _say("The cases side by side (each in its own currency and units; the summaries follow)\n")
            _say(side_by_side.text_table(cases, results))
        for c, f, r in zip(cases, ledgers, results):
            _say(terminal.summary_text(c, f, r, yearly=not args.brief))
    return 0


def _cmd_check(args: argparse.Namespace) -> int:
    def report(path: str, case) -> None:
        for w in case.warnings:
            warn(w)
        line = f"{path}: ok ({case.name}; preset {case['crop.preset']}; {case.stand_life} years; hash {case.hash})"
        _say(fitted(line, on_terminal()))  # one line per case in a log or a pipe, for grep

    _load_all(args.cases, report)
    return 0


def _cmd_new(args: argparse.Namespace) -> int:
    from tea.inputs.case import load_case, preset_for
    from tea.inputs.starter import starter_case

    crop = preset_for(args.crop)
    name = args.name if args.name.lower().endswith(".toml") else args.name + ".toml"  # "field.TOML" as it is
    path = Path(name)
    _check_outputs([(name, (".toml",))], args.force)
    base = load_case(args.base) if args.base else None
    if base is not None and args.currency and args.currency != base.currency:
        from tea.core.errors import CaseError, Problem

        raise CaseError([Problem(args.base, "case.currency", f"the case's money is in {base.currency}, not "
                                 f"{args.currency} (--currency): a case started from it keeps its prices as they are, "
                                 "so it keeps its currency")])
    system = args.units or (base.unit_system if base else "metric")
    currency = args.currency or (base.currency if base else "EUR")
    typed = args.crop.strip().lower()
    text = starter_case(Path(name).stem, crop, system, currency, base=base, crop_name=typed if typed != crop else None)
    from tea.core.files import atomic_write_text

    atomic_write_text(path, text)
    _say(f"wrote {path}: a starter case for preset {crop}" + (f" on the field and deal of {args.base}" if base else "")
         + f"; edit it, then `tea check {path}`")
    return 0


def _cmd_presets(args: argparse.Namespace) -> int:
    from tea.outputs import terminal

    _say(terminal.presets_text(verbose=args.verbose, system=args.units, width=on_terminal()))
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="tea",
        description="Stand-life economics and carbon accounting for perennial energy crops. "
        "Planning estimates, not financial, tax or agronomic advice.",
    )
    parser.add_argument("--version", action="version", version=f"tea {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    run = sub.add_parser("run", help="compute cases: terminal summary, JSON, workbook, printed summary")
    run.add_argument("cases", nargs="+", metavar="CASE", help="case files (.toml, or a workbook written by tea)")
    run.add_argument("--json", action="store_true", help="print machine-readable JSON instead of the summary")
    run.add_argument("--brief", action="store_true", help="leave the yearly table out of the summary")
    run.add_argument("--xlsx", metavar="OUT.xlsx", help="write the live-formula workbook")
    run.add_argument("--pdf", metavar="OUT.pdf", help="write the printed summary as PDF")
    run.add_argument("--html", metavar="OUT.html", help="write the printed summary as HTML")
    run.add_argument("--page-size", choices=("A4", "Letter"), help="paper size (default: the case's)")
    run.add_argument("--sensitivity", action="store_true",
                     help="add what moves NPV (tornado chart, workbook sheet) to --pdf/--html/--xlsx even where "
                     "a case has no [sensitivity] section")
    run.add_argument("--force", action="store_true", help="overwrite existing output files")
    run.set_defaults(func=_cmd_run)

    check = sub.add_parser("check", help="validate case files without computing them")
    check.add_argument("cases", nargs="+", metavar="CASE",
                       help="case files (.toml, or a workbook written by tea) to validate; every problem is listed")
    check.set_defaults(func=_cmd_check)

    from tea.inputs.case import preset_names

    new = sub.add_parser("new", help="write a commented starter case")
    new.add_argument("name", metavar="NAME", help="file to write (.toml is added if missing)")
    def crop_type(text: str) -> str:
        from tea.inputs.case import preset_for

        if preset_for(text) is None:
            raise argparse.ArgumentTypeError(f"expected a crop preset ({', '.join(preset_names())}) or a crop name "
                                             f"`tea presets` lists (e.g. miscanthus, switchgrass, willow, poplar), "
                                             f"got {text!r}")
        return text

    new.add_argument("--crop", required=True, metavar="CROP", type=crop_type,
                     help=f"crop preset ({', '.join(preset_names())}) or a crop name it stands for "
                          "(miscanthus, switchgrass, willow, poplar; see `tea presets`)")
    new.add_argument("--from", dest="base", metavar="CASE",
                     help="start from this case's field and deal (another crop on the same field)")
    new.add_argument("--units", choices=("metric", "us_customary"),
                     help="unit system of the keys (default: the --from case's, else metric)")
    new.add_argument("--currency", type=_currency, help="ISO 4217 currency code (default: the --from case's, else EUR)")
    new.add_argument("--force", action="store_true", help="overwrite an existing file")
    new.set_defaults(func=_cmd_new)

    presets = sub.add_parser("presets", help="list the crop presets and the sources of their values")
    presets.add_argument("-v", "--verbose", action="store_true", help="show every value with its source")
    presets.add_argument("--units", default="metric", choices=("metric", "us_customary"),
                         help="unit system of the values shown with -v (default metric)")
    presets.set_defaults(func=_cmd_presets)

    analysis_cli.add_commands(sub)
    explain_cli.add_commands(sub)
    yield_cli.add_commands(sub)
    return parser


def _currency(text: str) -> str:
    """An argparse type: a three-letter ISO 4217 code."""
    from tea.inputs.case import currency_problem

    why = currency_problem(text)
    if why:
        raise argparse.ArgumentTypeError(why)
    return text


def _error_lines(exc: BaseException) -> list[str]:
    """The one-line messages of an expected error."""
    from tea.core.safe_text import clip

    if isinstance(exc, CaseError):
        lines = [str(p) for p in exc.problems]
    elif isinstance(exc, MemoryError):
        lines = ["not enough memory for this run; ask for less (fewer draws, rows or cases)"]
    elif isinstance(exc, OSError) and not isinstance(exc, BrokenPipeError):
        from tea.core.files import write_refused

        lines = [str(write_refused(exc.filename or "output", exc))]
    else:
        lines = str(exc).splitlines() or [exc.__class__.__name__]
    return [clip(line, ERROR_LINE_LIMIT) for line in lines]


def main(argv: Sequence[str] | None = None) -> int:
    streams = sys.stdout, sys.stderr
    sys.stdout, sys.stderr = SafeStream(sys.stdout), SafeStream(sys.stderr)
    try:
        return _main(argv)
    finally:
        sys.stdout, sys.stderr = streams


@lru_cache(maxsize=1)
def _parser() -> argparse.ArgumentParser:
    """The parser, built once a process (tea called in-process, as tests do, parses many times)."""
    return build_parser()


#: options of `tea run` that take a value (what :func:`_one_page` skips over)
_RUN_VALUES = ("--xlsx", "--pdf", "--html", "--page-size")


def _one_page(argv: Sequence[str]) -> bool:
    """Whether the command line asks for one case's printed page (`tea run CASE --pdf/--html ...`), read
    before the parser is built: only a head start rests on it (a worker loading the chart library)."""
    if not argv or argv[0] != "run":
        return False
    cases, page, skip = 0, False, False
    for arg in argv[1:]:
        if skip:
            skip = False
        elif arg.startswith("--"):
            page = page or arg.split("=", 1)[0] in ("--pdf", "--html")
            skip = arg in _RUN_VALUES
        elif not arg.startswith("-"):
            cases += 1
    return page and cases == 1


def _main(argv: Sequence[str] | None) -> int:
    from tea.outputs import chart_library, workers

    chart_library.QUICK_IMPORT = True  # a command's process never shows matplotlib's help
    if _one_page(sys.argv[1:] if argv is None else list(argv)):
        # one page: one worker loads the chart library and another the PDF engine now, while this process
        # builds the options, loads the model and computes the case; then the one draws the page's charts
        # while the other lays the page out (tea.outputs.report.render_summary). The three processes use the
        # cores between them: the numerical library's own thread pool (one thread per core, started in each
        # process that loads it) would only compete with them, for arithmetic on one case's 30 years
        os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
        from tea.core.errors import TeaError

        try:
            workers.stand_by("tea.outputs.pdf_page:warm_up", role="page")
            # the chart worker forked once the numerical library is loaded here (this process needs it too):
            # loaded once, not once in each
            import numpy  # noqa: F401

            workers.stand_by("tea.outputs.chart_library:load", role="charts")
        except TeaError:  # a bad TEA_JOBS: said, as every other error, once the run asks for workers
            pass
    try:
        return _run(argv)
    finally:
        workers.stand_down()  # a worker standing by that was never given its work (the run ended before)


def _run(argv: Sequence[str] | None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except KeyboardInterrupt:
        from tea.core.files import not_written_note

        print(INTERRUPTED_MESSAGE + not_written_note(), file=sys.stderr)
        return INTERRUPTED
    except BrokenPipeError:  # a reader that went away: no more printing, and not an error
        _quiet_stdout()
        return 0
    except Exception as exc:
        status = next((code for kind, code in EXIT_STATUS if isinstance(exc, kind)), None)
        if status is None:  # a bug: one line, and the traceback only on request
            if os.environ.get("TEA_DEBUG"):
                raise
            from tea.core.safe_text import clip

            print(f"tea: internal error: {exc.__class__.__name__}: {clip(str(exc), ERROR_LINE_LIMIT)} "
                  "(set TEA_DEBUG=1 for details)", file=sys.stderr)
            return 1
        for line in _error_lines(exc):
            print(f"error: {line}", file=sys.stderr)
        return status


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
