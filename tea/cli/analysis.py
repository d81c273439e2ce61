"""Command-line front ends of sensitivity, risk and screening: parse, call the library, print.

``tea sensitivity CASE``, ``tea risk CASE --draws N --seed S`` and
``tea screen FIELDS.csv --case BASE.toml``. Bad input raises
:class:`~tea.core.errors.CaseError` (exit status 2, one line per problem); an
output that cannot be written raises :class:`~tea.core.errors.OutputError` (exit 2),
checked before any work is done. Progress bars go to stderr, never into JSON
on stdout.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from tea.cli.common import say, warn
from tea.core.errors import CaseError, Problem, unreadable


def _whole_number(minimum: int):
    """An argparse type: a whole number >= ``minimum``."""
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(f"expected a whole number >= {minimum}, got {value}")
        return value
    return parse


_positive_int = _whole_number(1)
_seed = _whole_number(0)


def _progress(args: argparse.Namespace) -> bool | None:
    return False if args.no_progress else None


def _warn(case) -> None:
    for w in case.warnings:
        warn(w)


#: chart files a command writes
FIGURE_SUFFIXES = (".png", ".svg", ".pdf")


def _save_figure(fig, path: str, force: bool) -> None:
    """Write a chart with the same bytes for the same chart: no date, fixed SVG ids."""
    from tea.core.files import atomic_write
    from tea.outputs import plots

    suffix = Path(path).suffix.lower().lstrip(".") or "png"
    atomic_write(path, lambda tmp: plots.save(fig, tmp, suffix), force=force)
    print(f"wrote {path}", file=sys.stderr)


def _check_figure_paths(paths, force: bool, case: str) -> None:
    from tea.cli.common import check_outputs

    check_outputs([(p, FIGURE_SUFFIXES) for p in paths], force, inputs=[case])


# ----------------------------------------------------------------------------- sensitivity
def _cmd_sensitivity(args: argparse.Namespace) -> int:
    from tea.analysis import sensitivity
    from tea.outputs import analysis_charts, analysis_text
    from tea.inputs.case import load_case

    case = load_case(args.case)
    _check_figure_paths([args.plot, args.surface_plot], args.force, args.case)
    _warn(case)
    res = sensitivity.run(case, with_surface=not args.no_surface)
    if args.plot:  # files first: a reader that stops reading stdout early cannot cost an output
        _save_figure(analysis_charts.tornado_chart(res, figure=args.figure), args.plot, args.force)
    if args.surface_plot:
        _save_figure(analysis_charts.surface_chart(res), args.surface_plot, args.force)
    if args.json:
        say(json.dumps(sensitivity.to_dict(res), indent=2, allow_nan=False))
    else:
        say(analysis_text.sensitivity_text(res, figure=args.figure))
    return 0


# ----------------------------------------------------------------------------- risk
def _cmd_risk(args: argparse.Namespace) -> int:
    from tea.analysis import risk
    from tea.outputs import analysis_charts, analysis_text
    from tea.inputs.case import load_case

    case = load_case(args.case)
    _check_figure_paths([args.plot], args.force, args.case)
    _warn(case)
    res = risk.run(case, draws=args.draws, seed=args.seed, progress=_progress(args))
    if args.plot:  # files first
        _save_figure(analysis_charts.histogram_chart(res), args.plot, args.force)
    for w in res.warnings:
        warn(w)
    if args.json:
        say(json.dumps(risk.to_dict(res), indent=2, allow_nan=False))
    else:
        say(analysis_text.risk_text(res))
    return 0


# ----------------------------------------------------------------------------- screen
def _cmd_screen(args: argparse.Namespace) -> int:
    from tea.analysis import screen
    from tea.cli.common import check_outputs
    from tea.inputs.case import load_case
    from tea.outputs import screen_files

    case = load_case(args.case)
    out = args.out or f"{Path(args.fields).stem}.screened.csv"
    errors = args.errors or str(Path(out).with_name(Path(out).stem + ".errors.csv"))
    check_outputs([(out, screen_files.TABLE_SUFFIXES), (errors, screen_files.ERRORS_SUFFIXES)], args.force,
                  inputs=[args.fields, args.case])
    screen_files.check_parquet(out)
    try:  # the table readable before any work, said as any input that cannot be read is
        Path(args.fields).open("rb").close()
    except OSError as exc:
        raise unreadable(args.fields, exc, "a field table (.csv)") from None
    _warn(case)
    result = screen.screen(args.fields, case, rank_by=args.rank_by, ascending=args.ascending,
                           chunk_rows=args.chunk_rows, progress=_progress(args))
    for w in result.warnings:
        warn(w)
    if result.bad:  # files first, then the printing
        screen_files.write_errors(result, errors, force=args.force)
    if not result.rows_evaluated:
        why = (f"every one of its {result.rows_read} rows has a problem, listed in {errors}" if result.rows_read
               else "it has no rows of fields under its header")
        raise CaseError([Problem(args.fields, "", f"no field could be evaluated: {why}")])
    screen_files.write_table(result, out, force=args.force)
    say(screen_files.summary_text(result, top=args.top))
    print(f"wrote {out} ({result.rows_evaluated} fields, ranked by {result.rank_by})", file=sys.stderr)
    if result.bad:
        print(f"skipped {result.rows_skipped} of {result.rows_read} rows; "
              f"{len(result.bad)} problems listed in {errors}", file=sys.stderr)
        for b in result.bad[:5]:
            print(f"  {args.fields}: {b}", file=sys.stderr)
        if len(result.bad) > 5:
            print(f"  ... and {len(result.bad) - 5} more in {errors}", file=sys.stderr)
    else:
        print("no rows skipped", file=sys.stderr)
    return 0


def add_commands(sub) -> None:
    """Add ``sensitivity``, ``risk`` and ``screen`` to the ``tea`` command's subparsers."""
    from tea.analysis import screen

    s = sub.add_parser("sensitivity", help="what moves the answer: each key input low and high, ranked; "
                       "break-even surface")
    s.add_argument("case", metavar="CASE", help="case file (.toml); ranges from its [sensitivity] section")
    s.add_argument("--json", action="store_true", help="print machine-readable JSON")
    s.add_argument("--figure", default="npv", choices=("npv", "eav", "npv_vs_current_use", "eav_vs_current_use"),
                   help="figure to rank by and chart (default npv)")
    s.add_argument("--no-surface", action="store_true", help="leave out the break-even surface")
    s.add_argument("--plot", metavar="OUT.png", help="write the tornado chart (.png, .svg or .pdf)")
    s.add_argument("--surface-plot", metavar="OUT.png", help="write the break-even surface chart")
    s.add_argument("--force", action="store_true", help="overwrite existing output files")
    s.set_defaults(func=_cmd_sensitivity)

    r = sub.add_parser("risk", help="Monte Carlo: percentiles of NPV, IRR and EAV, P(NPV < 0), DSCR, cash band")
    r.add_argument("case", metavar="CASE", help="case file (.toml); distributions from its [risk] section")
    r.add_argument("--draws", type=_positive_int, help="number of draws (default: the case's, else 10,000)")
    r.add_argument("--seed", type=_seed, help="random seed (default: the case's, else 12345)")
    r.add_argument("--json", action="store_true", help="print machine-readable JSON")
    r.add_argument("--plot", metavar="OUT.png", help="write the NPV histogram and cash-flow band (.png, .svg, .pdf)")
    r.add_argument("--no-progress", action="store_true", help="no progress bar")
    r.add_argument("--force", action="store_true", help="overwrite existing output files")
    r.set_defaults(func=_cmd_risk)

    c = sub.add_parser("screen", help="rank many fields: one row per field, columns overriding the base case")
    c.add_argument("fields", metavar="FIELDS.csv", help="field table (CSV; '#' lines are comments)")
    c.add_argument("--case", required=True, metavar="BASE.toml", help="base case the fields vary")
    c.add_argument("--out", metavar="OUT", help="ranked table: .csv (default FIELDS.screened.csv), .xlsx or .parquet")
    c.add_argument("--errors", metavar="ERR.csv", help="where skipped rows are listed (default OUT.errors.csv)")
    c.add_argument("--rank-by", default="eav_vs_current_use", metavar="FIGURE",
                   help="figure to rank by, as named in the ranked file or without its unit (default "
                        "eav_vs_current_use; add _field for whole-field figures: "
                        + ", ".join(screen.FIELD_FIGURES) + ")")
    c.add_argument("--ascending", action="store_true", help="rank the smallest first")
    c.add_argument("--top", type=_positive_int, default=10, help="fields shown in the terminal (default 10)")
    c.add_argument("--chunk-rows", type=_positive_int, default=screen.TABLE_CHUNK_ROWS,
                   help=f"rows evaluated together (default {screen.TABLE_CHUNK_ROWS:,}); bounds memory")
    c.add_argument("--no-progress", action="store_true", help="no progress bar")
    c.add_argument("--force", action="store_true", help="overwrite existing output files")
    c.set_defaults(func=_cmd_screen)
