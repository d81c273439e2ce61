"""`tea yield`: the site's yield potential from its climate (Monteith's light-use efficiency)."""

from __future__ import annotations

import argparse
import json
import sys

from tea.core.errors import CaseError, Problem


def add_commands(sub) -> None:
    p = sub.add_parser(
        "yield", help="the yield potential of the case's site climate: the four terms of Monteith's equation",
        description="The crop's yield potential at the case's site from its [site_climate] section: seasonal "
        "radiation x share intercepted x conversion efficiency x share harvested, month by month, and the "
        "case's own yield as a share of it.")
    p.add_argument("case", metavar="CASE", help="case file with a [site_climate] section")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--plot", metavar="OUT.png", help="write the chart of intercepted radiation (.png, .svg or .pdf)")
    p.add_argument("--force", action="store_true", help="overwrite an existing chart file")
    p.set_defaults(func=_cmd_yield)


def _cmd_yield(args: argparse.Namespace) -> int:
    from tea.cli.analysis import _check_figure_paths, _save_figure, _warn
    from tea.cli.common import say
    from tea.inputs import site
    from tea.inputs.case import load_case
    from tea.outputs import yield_text

    _check_figure_paths([args.plot], args.force, args.case)
    case = load_case(args.case)
    if not site.given(case.values):
        raise CaseError([Problem(case.source, site.SECTION, "missing section: `tea yield` needs a [site_climate] "
                                 "with radiation_mj_per_m2_per_day and temperature_c (12 monthly values each)")])
    _warn(case)
    if args.plot:  # files first
        from tea.outputs import charts

        s = site.season_for(case.values)
        fig = charts.season_light_figure(yield_text.MONTHS, s.par_in_season.tolist(), s.intercepted_par.tolist(),
                                         width_in=6.0, height_in=3.2)
        _save_figure(fig, args.plot, args.force)
    if args.json:
        say(json.dumps(yield_text.yield_payload(case), indent=2, allow_nan=False))
    else:
        say(yield_text.yield_text(case))
    sys.stdout.flush()
    return 0
