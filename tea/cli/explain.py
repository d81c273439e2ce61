"""`tea explain`: where a figure or line of a case comes from."""

from __future__ import annotations

import argparse
import json
import sys

from tea.core.errors import CaseError, Problem
from tea.core.texts import on_terminal


def add_commands(sub) -> None:
    p = sub.add_parser(
        "explain", help="where a figure or line comes from: formula, inputs with their sources, what it rests on",
        description="Explain a decision figure or ledger line of a case: its formula in symbols and in words, "
        "the case inputs it uses (value, unit, origin, source) and the lines it rests on, as a tree.")
    p.add_argument("case", metavar="CASE", help="case file (.toml, or a workbook written by tea)")
    p.add_argument("name", metavar="NAME", nargs="?",
                   help="figure or line (e.g. npv, breakeven_price, sold_t_dm); figure:NAME or line:NAME where "
                   "both exist")
    p.add_argument("--year", type=int, help="a line's value in this year (0 = planting)")
    p.add_argument("--depth", type=int, default=2, help="levels of the tree to show (default 2)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--list", action="store_true", help="list every figure and line that can be explained")
    p.set_defaults(func=_cmd_explain)


def _cmd_explain(args: argparse.Namespace) -> int:
    from tea.inputs.case import load_case
    from tea.model import explain as X
    from tea.outputs.explain_text import explain_text

    if args.list or not args.name:
        for kind, name, label in X.listing():
            print(f"{kind:7} {name:52} {label}")
        return 0
    case = load_case(args.case)
    if args.depth < 0:
        raise CaseError([Problem("--depth", "", f"expected a whole number >= 0, got {args.depth}")])
    try:
        ex = X.explain(case, args.name, year=args.year, depth=args.depth)
    except (KeyError, ValueError) as exc:
        message = exc.args[0] if exc.args else str(exc)
        raise CaseError([Problem(case.source, args.name, message)]) from None
    if args.json:
        print(json.dumps(ex.to_dict(), indent=2, allow_nan=False, default=str))
    else:
        print(explain_text(ex, case.currency, case.unit_system, on_terminal()))
    sys.stdout.flush()
    return 0
