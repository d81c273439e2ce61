"""The printed summary: one page per case, and the advisor's comparison report.

:func:`render_summary` writes one case's page and :func:`render_comparison`
several cases side by side followed by each case's page, as self-contained
HTML (inline SVG charts and CSS, a print stylesheet for A4 and Letter) or as
PDF through WeasyPrint, an HTML-to-PDF engine (fonts embedded). The format
follows the file name: ``.pdf`` or ``.html``.

The page only renders: every figure comes from :class:`tea.model.results.Results`
and the ledger, formatted by :mod:`tea.outputs.terminal` and :mod:`tea.inputs.display` exactly
as the terminal shows it, in the case's units and currency.

Safety and reproducibility
--------------------------
* The jinja2 templates (``templates/`` next to the package) autoescape: a
  case's own words (name, field name, notes) cannot inject markup or script.
  Only chart SVG made by :mod:`tea.outputs.charts` is inserted as markup.
* The page refers to nothing outside itself, and the PDF engine is given a URL
  fetcher that refuses every URL.
* The same case gives the same bytes: no dates in the PDF, fixed chart ids.
* An existing file is replaced only with ``force=True``; writes are atomic.

One page
--------
A case's page must fit one sheet. The page is laid out at the densest setting
needed: the layout is measured with the PDF engine at density 0 and, if it
runs over, again one step denser (smaller type, shorter charts, a condensed
yearly table), up to :data:`MAX_DENSITY`. A page with the tornado chart of
NPV (see :func:`render_summary`) has one step more, :data:`BESIDE`: the
densest type with the chart moved from below the other charts into the
yearly-table block, beside the table.
"""

from __future__ import annotations

import math
import os
import re
import warnings
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any, Sequence

import pandas as pd
from markupsafe import Markup

import tea

from tea import __version__
from tea.inputs import display
from tea.outputs import charts, terminal
from tea.outputs.headline import headline
from tea.inputs.case import Case
from tea.core.errors import OutputError
from tea.core.files import atomic_write, atomic_write_text, check_target
from tea.model.results import Results
from tea.core.texts import CAUTIONS

def _templates_folder() -> Path:
    """The templates folder: the top-level ``templates/`` of the source tree, installed as ``tea.templates``."""
    return Path(str(resources.files("tea.templates")))


#: the jinja2 templates and the page's CSS (package data of ``tea.templates``)
TEMPLATES = _templates_folder()
PAGE_SIZES = {"a4": "A4", "letter": "Letter"}
#: densest layout tried before giving up on one page
MAX_DENSITY = 4
#: the last layout step of a page with a tornado chart: type of MAX_DENSITY, the chart beside the yearly table
BESIDE = MAX_DENSITY + 1
#: chart height per density step, as a share of the normal height
_CHART_SCALE = (1.0, 0.92, 0.84, 0.76, 0.70)
#: yearly rows shown in full before runs of identical years are condensed
MAX_TABLE_ROWS = 24
MINUS = "\u2212"

#: the density each recently laid-out page needed, so that HTML made after the PDF reuses it
_fit_cache: dict[tuple[Any, ...], Any] = {}
_FIT_CACHE_SIZE = 64


# ----------------------------------------------------------------------------- public API
def render_summary(
    case: Case,
    ledger: pd.DataFrame,
    results: Results,
    path: str | Path,
    *,
    force: bool = False,
    page_size: str | None = None,
    sensitivity: charts.Chart | bool | None = None,
) -> Path:
    """Write one case's printed summary, one page, as PDF or HTML.

    Parameters
    ----------
    case, ledger, results
        The case, its ledger (:func:`tea.build_ledger`) and its decision figures
        (:func:`tea.summarise`).
    path : str or Path
        Output file ending ``.pdf`` or ``.html``.
    force : bool
        Replace an existing file.
    page_size : {"A4", "Letter"}, optional
        Paper size; default the case's ``case.page_size``.
    sensitivity : bool or tea.outputs.charts.Chart, optional
        What moves the NPV, below the other charts: by default (None) the
        tornado chart of NPV when the case has a ``[sensitivity]`` section;
        True always shows it, False never; a :class:`tea.outputs.charts.Chart` is
        shown instead of it.

    Returns
    -------
    Path
        The file written.
    """
    path, kind = _target(path, force)
    size = _page_size(page_size, case)
    tornado = _SensitivityViews(case, sensitivity, "case-0")
    key = ("summary", case.hash, case.source, size, tornado.key)
    page = lambda density: _case_page(case, ledger, results, "case-0", density, tornado)  # noqa: E731

    def html_at(density: int) -> str:
        return _render("summary.html.j2", page_size=size, page=page(density),
                       meta=_meta([case], [results]), generator=f"tea {__version__}")

    if kind == "html" and key in _fit_cache:  # the fit of the same page, just measured
        return atomic_write_text(path, html_at(_fit_cache[key]), force=True)
    density, doc = _fit_one(html_at, _first_density(case, ledger), tornado.last_density)
    _remember(key, density)
    if kind == "html":
        return atomic_write_text(path, html_at(density), force=True)
    return atomic_write(path, lambda tmp: _write_pdf(doc, tmp), force=True)


def render_comparison(
    cases: Sequence[Case],
    ledgers: Sequence[pd.DataFrame],
    results: Sequence[Results],
    path: str | Path,
    *,
    force: bool = False,
    page_size: str | None = None,
    sensitivity: bool | None = None,
) -> Path:
    """Write the advisor's comparison report: the cases side by side, then each case's page.

    Parameters
    ----------
    cases, ledgers, results : sequences of equal length
        The cases with their ledgers and decision figures.
    path : str or Path
        Output file ending ``.pdf`` or ``.html``.
    force : bool
        Replace an existing file.
    page_size : {"A4", "Letter"}, optional
        Paper size; default the first case's ``case.page_size``.
    sensitivity : bool, optional
        The tornado chart of NPV on each case's page: by default (None) on
        the pages of the cases that have a ``[sensitivity]`` section; True on
        every case's page, False on none.
    """
    if not (len(cases) == len(ledgers) == len(results)) or not cases:
        raise ValueError("render_comparison: expected as many ledgers and results as cases (at least one)")
    if sensitivity is not None and not isinstance(sensitivity, bool):
        raise TypeError("sensitivity: expected True, False or None")
    path, kind = _target(path, force)
    size = _page_size(page_size, cases[0])
    overview = _overview(cases, ledgers, results, size)
    meta = _meta(cases, results)
    tornadoes = [_SensitivityViews(c, sensitivity, f"case-{i}") for i, c in enumerate(cases)]

    def html_at(densities: Sequence[int]) -> str:
        pages = [_case_page(c, f, r, f"case-{i}", d, t)
                 for i, (c, f, r, d, t) in enumerate(zip(cases, ledgers, results, densities, tornadoes))]
        return _render("compare.html.j2", page_size=size, overview=overview, pages=pages, meta=meta,
                       generator=f"tea {__version__}")

    key = ("compare", tuple((c.hash, c.source, t.key) for c, t in zip(cases, tornadoes)), size)
    if kind == "html" and key in _fit_cache:  # the fit of the same report, just measured
        return atomic_write_text(path, html_at(_fit_cache[key]), force=True)
    densities, doc = _fit_each(html_at, [_first_density(c, f) for c, f in zip(cases, ledgers)],
                               [t.last_density for t in tornadoes])
    _remember(key, tuple(densities))
    if kind == "html":
        return atomic_write_text(path, html_at(densities), force=True)
    return atomic_write(path, lambda tmp: _write_pdf(doc, tmp), force=True)


def summary_html(case: Case, ledger: pd.DataFrame, results: Results, page_size: str | None = None,
                 density: int = 0, sensitivity: charts.Chart | bool | None = None) -> str:
    """One case's page as an HTML string at a given density (no fitting, no file).

    ``sensitivity`` as for :func:`render_summary`.
    """
    size = _page_size(page_size, case)
    tornado = _SensitivityViews(case, sensitivity, "case-0")
    return _render("summary.html.j2", page_size=size,
                   page=_case_page(case, ledger, results, "case-0", density, tornado),
                   meta=_meta([case], [results]), generator=f"tea {__version__}")


# ----------------------------------------------------------------------------- files and engine
def _target(path: str | Path, force: bool) -> tuple[Path, str]:
    path = Path(path)
    kind = path.suffix.lower().lstrip(".")
    if kind not in ("pdf", "html"):
        raise OutputError(f"{path}: expected a file name ending .pdf or .html")
    return check_target(path, force), kind


def _page_size(given: str | None, case: Case) -> str:
    value = given if given is not None else case.values.get("case.page_size") or "A4"
    size = PAGE_SIZES.get(str(value).lower())
    if size is None:
        raise OutputError(f"page size: expected A4 or Letter, got {value!r}")
    return size


@lru_cache(maxsize=1)
def _environment():
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(TEMPLATES)),
        autoescape=True,  # every template, whatever its name: case text is never markup
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    return env


def _render(template: str, **context: Any) -> str:
    return _environment().get_template(template).render(**context)


def _url_fetcher():
    """A fetcher that refuses every URL: the page must stand on its own."""
    from weasyprint import urls

    if hasattr(urls, "URLFetcher"):
        return urls.URLFetcher(allowed_protocols=())

    def refuse(url: str, *args: Any, **kwargs: Any):  # older WeasyPrint: a plain function
        raise ValueError(f"external reference refused: {url}")

    return refuse


def _layout(html: str):
    """Lay the HTML out as pages with WeasyPrint (a :class:`weasyprint.Document`)."""
    import logging

    import weasyprint

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    return weasyprint.HTML(string=html, base_url=None, url_fetcher=_url_fetcher()).render()


#: font subsets are stamped with this time [s since 1970] unless SOURCE_DATE_EPOCH is set:
#: the font subsetter otherwise writes the current time into each embedded font
FONT_EPOCH = "0"


def _write_pdf(doc, target: Path) -> None:
    """Write the laid-out document as PDF: fonts embedded as subsets, no dates anywhere.

    The subsetter (fontTools) reads the reproducible-builds variable
    ``SOURCE_DATE_EPOCH`` for the timestamp of each subset; it is set for the
    duration of the write when the environment does not set it.
    """
    given = os.environ.get("SOURCE_DATE_EPOCH")
    if given is None:
        os.environ["SOURCE_DATE_EPOCH"] = FONT_EPOCH
    try:
        doc.write_pdf(str(target))
    finally:
        if given is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)


def _remember(key: tuple[Any, ...], value: Any) -> None:
    if len(_fit_cache) >= _FIT_CACHE_SIZE:
        _fit_cache.clear()
    _fit_cache[key] = value


def _first_density(case: Case, ledger: pd.DataFrame) -> int:
    """Where to start looking: a yearly table that needs two blocks side by side needs dense type.

    The search always starts here (never from an earlier fit), so the same case
    gives the same page in any process.
    """
    return 0 if len(_chunks(_cash_rows(case, ledger)[0])) == 1 else 2


def _fit_one(html_at, start: int = 0, last: int = MAX_DENSITY) -> tuple[int, Any]:
    """The first density (from ``start`` to ``last``) at which the page fits one sheet, and its layout."""
    doc = None
    for density in range(start, last + 1):
        doc = _layout(html_at(density))
        if len(doc.pages) == 1:
            return density, doc
    warnings.warn(f"the summary takes {len(doc.pages)} pages even at the densest layout", stacklevel=3)
    return last, doc


def _fit_each(html_at, densities: list[int], last: Sequence[int] | None = None) -> tuple[list[int], Any]:
    """Densities (from the ones given, each up to its ``last``) at which each case page of a comparison fits
    one sheet, and the layout."""
    n = len(densities)
    last = list(last) if last is not None else [MAX_DENSITY] * n
    while True:
        doc = _layout(html_at(densities))
        starts = []
        for i in range(n):
            starts.append(next(k for k, page in enumerate(doc.pages) if f"case-{i}" in page.anchors))
        ends = starts[1:] + [len(doc.pages)]
        over = [i for i in range(n) if ends[i] - starts[i] > 1 and densities[i] < last[i]]
        if not over:
            if any(e - s > 1 for s, e in zip(starts, ends)):
                warnings.warn("a case page takes more than one page even at the densest layout", stacklevel=3)
            return densities, doc
        for i in over:
            densities[i] += 1


# ----------------------------------------------------------------------------- formatting
def print_minus(text: str) -> str:
    """Formatted numbers with a true minus sign (U+2212), which cannot be missed in print.

    >>> print_minus("-1,234 EUR/ha; -5.20 t CO2e/ha; year-0 cost")
    '−1,234 EUR/ha; −5.20 t CO2e/ha; year-0 cost'
    """
    out = []
    for i, ch in enumerate(text):
        starts_number = i + 1 < len(text) and text[i + 1].isdigit() and (i == 0 or not text[i - 1].isalnum())
        out.append(MINUS if ch == "-" and starts_number else ch)
    return "".join(out)


def _per(case: Case) -> str:
    return "acre" if case.unit_system == "us_customary" else "ha"


def _fig(case: Case, res: Results, name: str, whole: bool = False) -> str:
    """A decision figure as the terminal shows it, with a print minus sign."""
    return print_minus(terminal._fig(res, case, name, whole=whole))


def _value(res: Results, name: str) -> float | None:
    return res.per_ha.get(name)


def _tone(value: float | None, good_if_negative: bool = False) -> str:
    if value is None or value == 0:
        return ""
    return "good" if (value < 0) == good_if_negative else "bad"


def _money(case: Case, value: float | None, unit: str = "money/ha", digits: int | None = None) -> str:
    v, shown = display.convert(value, unit, case.unit_system)
    price_unit = "GJ" if case.price_basis == "gj" else "t DM"
    return print_minus(display.money(v, display.unit_text(shown, case.currency, price_unit), digits))


def _quantity(case: Case, value: float | None, unit: str) -> str:
    v, shown = display.convert(value, unit, case.unit_system)
    return print_minus(f"{display.number(v)} {shown}")


def _words(label: str) -> str:
    """A schema label such as ``cropland_full_till`` in words."""
    return str(label).replace("_", " ")


def _rate_text(res: Results) -> str:
    real = display.percent(res.discount_rate_real, 1)
    if res.rate_basis == "nominal":
        return (f"{display.percent(res.discount_rate_given, 1)} nominal less {display.percent(res.inflation, 1)} "
                f"inflation = {display.percent(res.discount_rate_real, 2)} real")
    return f"{real} real"


def _source(case: Case, path: str) -> str:
    """Where a value came from, in plain words."""
    note = case.notes.get(path, "") or case.origin.get(path, "")
    if note.startswith("preset "):
        name, _, rest = note[len("preset "):].partition(": ")
        return f"crop preset ({_words(name)}): {rest}"
    if note == "default":
        return "tea default"
    return note


# ----------------------------------------------------------------------------- a case page
@dataclass(frozen=True)
class Tile:
    """One key figure: its label, its value as formatted, and two lines of context."""

    label: str
    value: str
    tone: str = ""
    whole: str = ""
    hint: str = ""

    @property
    def number(self) -> str:
        """The number at the start of the value ("" if it does not start with one)."""
        m = _NUMBER.match(self.value)
        return m.group(0) if m else ""

    @property
    def unit(self) -> str:
        """The rest of the value after its number."""
        return self.value[len(self.number):].strip()


_NUMBER = re.compile(r"^[\u2212-]?[\d,]+(\.\d+)?( %)?")


def _tiles(case: Case, res: Results) -> list[Tile]:
    per = _per(case)
    life = case.stand_life
    area_v, area_u = display.area(case.area_ha, case.unit_system)
    field = f"whole field ({display.number(area_v)} {area_u}): "

    def whole(name: str) -> str:
        return field + _fig(case, res, name, whole=True) if _value(res, name) is not None else ""

    def val(name: str) -> str:
        return "–" if _value(res, name) is None else _fig(case, res, name)

    def note(name: str, otherwise: str) -> str:
        return res.notes[name] if _value(res, name) is None and name in res.notes else otherwise

    tiles = [
        Tile("Net present value", val("npv"), _tone(_value(res, "npv")), whole("npv"),
             f"all cash in and out over {life} years, valued today at "
             f"{display.percent(res.discount_rate_real, 1)} real"),
        Tile("Gain over the current use", val("npv_vs_current_use"), _tone(_value(res, "npv_vs_current_use")),
             whole("npv_vs_current_use"),
             f"present value, after giving up today's margin of {_fig(case, res, 'current_margin')}"),
        Tile("The same gain, per year", val("eav_vs_current_use"), _tone(_value(res, "eav_vs_current_use")),
             whole("eav_vs_current_use"), f"an even yearly amount over the {life}-year stand life"),
        Tile("Rate of return (IRR)", val("irr"), "", "",
             note("irr", f"real; against the current use: "
                  + (val("irr_vs_current_use") if _value(res, "irr_vs_current_use") is not None else "not defined"))),
        Tile("Pays back in", val("payback_year"), "" if _value(res, "payback_year") is not None else "bad", "",
             note("payback_year", "when the running total of cash is back above zero"
                  + (f"; counting interest, {val('discounted_payback_year')}"
                     if _value(res, "discounted_payback_year") is not None else ""))),
        Tile("Peak funding need", val("peak_funding_need"), "", whole("peak_funding_need"),
             f"the deepest point of the running total, in {val('peak_funding_year')}"
             if _value(res, "peak_funding_year") is not None else "the cash never runs below zero"),
        Tile("Break-even price", val("breakeven_price"), "", "",
             f"price assumed {_price(case)}; to match the current use {val('breakeven_price_vs_current_use')}"),
        Tile("Break-even yield", val("breakeven_mature_yield_t_dm_per_ha"), "", "",
             note("breakeven_mature_yield_t_dm_per_ha",
                  f"mature yield assumed {_quantity(case, case['yield.mature_t_dm_per_ha'], 't DM/ha/yr')}; "
                  f"to match the current use {val('breakeven_mature_yield_vs_current_use_t_dm_per_ha')}")),
        Tile("Soil carbon gained", val("soc_gain_t_c"), _tone(_value(res, "soc_gain_t_c")),
             whole("soc_gain_t_c"), _soc_hint(case, res)),
        Tile("Net greenhouse-gas balance", val("ghg_net_t_co2e"), _tone(_value(res, "ghg_net_t_co2e"), True),
             whole("ghg_net_t_co2e"),
             f"emissions {val('ghg_emissions_t_co2e')} less the soil carbon gain; below zero is a net removal"),
    ]
    credits = _value(res, "carbon_credit_revenue") or 0.0
    if credits > 0:
        tiles.append(Tile("Carbon credits, present value", val("carbon_credit_pv"), "", whole("carbon_credit_pv"),
                          f"{val('credited_t_co2e')} credited over the stand life at "
                          f"{_money(case, case['carbon.credit_price_per_t_co2e'], 'money', 2)}/t CO2e"))
    grant = case.values.get("establishment.grant_per_ha") or 0.0
    tiles.append(Tile("Establishment cost", val("establishment_cost"), "", whole("establishment_cost"),
                      (f"before the grant of {_money(case, grant, 'money/ha')}; " if grant else "")
                      + "with the expected replanting"))
    if len(tiles) % 4:  # fill the last row with the current use's margin, the yardstick of the page
        tiles.append(Tile("Current use earns", val("current_margin"), "", whole("current_margin"),
                          f"{_words(case['field.current_use'])}, a year, after variable costs"))
    return [Tile(t.label, t.value, t.tone, t.whole, print_minus(t.hint)) for t in tiles]


def _soc_hint(case: Case, res: Results) -> str:
    gain = _value(res, "soc_gain_t_c") or 0.0
    if gain > 0:
        return f"= {_fig(case, res, 'soc_gain_t_co2e')}; lost again if the field returns to its current use"
    if gain < 0:
        return f"= {_fig(case, res, 'soc_gain_t_co2e')}: the crop holds less soil carbon than the current use"
    return "the crop holds the same soil carbon as the current use"


def _price(case: Case) -> str:
    if case.price_basis == "gj":
        return _money(case, case["revenue.price_per_gj"], "money/GJ", 2)
    return _money(case, case["revenue.price_per_t_dm"], "money/t DM", 2)


def _loan_line(case: Case, res: Results) -> str:
    if not _value(res, "loan_principal"):
        return ""
    cover = (f"lowest DSCR {_fig(case, res, 'min_dscr')} in {_fig(case, res, 'min_dscr_year')} "
             f"(covenant {_fig(case, res, 'dscr_covenant')}" if _value(res, "min_dscr") is not None else "")
    below = _value(res, "years_below_covenant") or 0
    return (f"{_fig(case, res, 'loan_principal')} at {display.percent(case['loan.rate'], 1)}, repaid at "
            f"{_fig(case, res, 'loan_payment')}; {cover}"
            + ((f"; {below:.0f} year{'s' if below != 1 else ''} below)" if below else ")") if cover else "")
            + f"; own funding peaks at {_fig(case, res, 'equity_peak_funding_need')}.")


@dataclass(frozen=True)
class Cell:
    text: str
    tone: str = ""


def _cash_rows(case: Case, frame: pd.DataFrame) -> tuple[list[list[Cell]], bool]:
    """The yearly cash table, condensed when long (runs of three or more identical years)."""
    system = case.unit_system
    rows = []
    for _, r in frame.iterrows():
        sold, _u = display.convert(float(r["sold_t_dm"]), "t DM/ha", system)
        money = [display.convert(float(r[k]), "money/ha", system)[0]
                 for k in ("total_revenue", "total_cost", "net_cash_flow", "cumulative_cash_flow")]
        shown = (f"{sold:,.1f}" if r["harvest"] > 0 and sold > 0 else "–",
                 *(display.money(v, digits=0) for v in money))
        rows.append((int(r["year"]), shown, money))
    condensed = False
    if len(rows) > MAX_TABLE_ROWS:
        grouped: list[tuple[str, tuple, list]] = []
        i = 0
        while i < len(rows):
            j = i
            while j + 1 < len(rows) and rows[j + 1][1][:4] == rows[i][1][:4]:
                j += 1
            if j - i >= 2:
                grouped.append((f"{rows[i][0]}–{rows[j][0]}", rows[i][1][:4] + (rows[j][1][4],), rows[j][2]))
                condensed = True
                i = j + 1
            else:
                grouped.append((str(rows[i][0]), rows[i][1], rows[i][2]))
                i += 1
    else:
        grouped = [(str(y), s, m) for y, s, m in rows]
    out = []
    for year, shown, money in grouped:
        net, cum = money[2], money[3]
        out.append([Cell(year), Cell(shown[0]), Cell(print_minus(shown[1])), Cell(print_minus(shown[2])),
                    Cell(print_minus(shown[3]), "neg" if net < -0.5 else ""),
                    Cell(print_minus(shown[4]), "neg" if cum < -0.5 else "")])
    return out, condensed


def _assumptions(case: Case, res: Results) -> list[dict[str, str]]:
    v = case.values
    per = _per(case)
    area_v, area_u = display.area(case.area_ha, case.unit_system)
    items = [
        ("Field", f"{v.get('field.name', '')}, {display.number(area_v)} {area_u}; {_words(v['field.climate'])} "
                  f"climate, {_words(v['field.soil'])} soil", _source(case, "field.area_ha")),
        ("Current use", f"{_words(v['field.current_use'])}, earning {_fig(case, res, 'current_margin')}",
         _source(case, "field.current_margin_per_ha")),
        ("Crop", case.preset.title, f"crop preset ({_words(case.preset.name)})"),
        ("Stand life", f"{case.stand_life} years", _source(case, "finance.stand_life_years")),
        ("Mature yield", f"{_quantity(case, v['yield.mature_t_dm_per_ha'], 't DM/ha/yr')} "
                         f"× site factor {v['yield.site_factor']:.2f}", _source(case, "yield.mature_t_dm_per_ha")),
        ("Harvest", _harvest_text(case), _source(case, "harvest.first_year")),
        ("Price", f"{_price(case)}" + _price_change_text(case),
         _source(case, "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm")),
        ("Establishment", f"{_fig(case, res, 'establishment_cost')} with expected replanting"
         + (f"; grant {_money(case, v.get('establishment.grant_per_ha'), 'money/ha')}"
            if v.get("establishment.grant_per_ha") else ""),
         _source(case, "establishment.planting_units_per_ha")),
        ("Discount rate", _rate_text(res), _source(case, "finance.discount_rate")),
        ("Soil carbon", f"{_quantity(case, res['soc_start_t_c_per_ha'], 't C/ha')} at planting, "
                        f"moving towards {_quantity(case, _soc_target(case), 't C/ha')} "
                        f"({_soc_method(case)})", _source(case, "carbon.soc_ref_t_c_per_ha")),
    ]
    if (v.get("carbon.credit_price_per_t_co2e") or 0) > 0:
        items.append(("Carbon credits", f"{_money(case, v['carbon.credit_price_per_t_co2e'], 'money', 2)}/t CO2e "
                      f"from year {v.get('carbon.credit_first_year', 1)}, "
                      f"{display.percent(v.get('carbon.credit_buffer_share') or 0.0, 0)} held back as a buffer",
                      _source(case, "carbon.credit_price_per_t_co2e")))
    if _value(res, "loan_principal"):
        items.append(("Loan", f"{display.percent(v['loan.share_of_establishment'], 0)} of the planting-year cost "
                      f"at {display.percent(v['loan.rate'], 1)} over {v['loan.term_years']} years, "
                      f"{v['loan.grace_years']} grace years", _source(case, "loan.rate")))
    return [{"label": a, "value": print_minus(b), "source": c} for a, b, c in items]


def _harvest_text(case: Case) -> str:
    v = case.values
    every = v["harvest.interval_years"]
    when = "every year" if every == 1 else f"every {every} years"
    timing = _words(v["harvest.timing"])
    text = f"{when} from year {v['harvest.first_year']}, {timing}"
    if v["harvest.timing"] == "late_winter" and v.get("harvest.overwinter_dm_loss"):
        text += f" ({display.percent(v['harvest.overwinter_dm_loss'], 0)} lost over winter)"
    return text


def _price_change_text(case: Case) -> str:
    change = case.values.get("revenue.price_change_per_year") or 0.0
    if case.values.get("revenue.price_path"):
        return ", following the price path given"
    if change == 0:
        return ", constant in real terms"
    return f", {print_minus(display.percent(change, 1))} a year in real terms"


def _soc_target(case: Case) -> float:
    v = case.values
    return v["carbon.soc_ref_t_c_per_ha"] * v["carbon.crop_f_lu"] * v["carbon.crop_f_mg"] * v["carbon.crop_f_i"]


def _soc_method(case: Case) -> str:
    v = case.values
    if v.get("carbon.soc_method") == "first_order":
        return f"first-order approach, {display.percent(v['carbon.first_order_rate_per_year'], 0)} a year"
    return f"IPCC Tier 1 stock change over {v['carbon.transition_years']} years"


def _charts(case: Case, frame: pd.DataFrame, res: Results, anchor: str, density: int) -> list[charts.Chart]:
    system, per = case.unit_system, _per(case)
    height = charts.HEIGHT_IN * _CHART_SCALE[min(density, len(_CHART_SCALE) - 1)]
    years = [float(y) for y in frame["year"]]

    def conv(column: str, unit: str) -> list[float]:
        return [display.convert(float(x), unit, system)[0] for x in charts.finite(frame[column])]

    dm_unit = display.convert(1.0, "t DM/ha", system)[1]
    pay = _value(res, "payback_year")
    return [
        charts.cumulative_cash(years, conv("cumulative_cash_flow", "money/ha"), pay,
                               f"{case.currency} per {per}", name=f"{anchor}-cash", height_in=height),
        charts.yield_by_age(years, conv("growth_t_dm", "t DM/ha"), conv("sold_t_dm", "t DM/ha"),
                            list(frame["harvest"]), dm_unit.replace("/", " per "), name=f"{anchor}-yield",
                            height_in=height),
        charts.soil_carbon(years, conv("soc_t_c", "t C/ha"), conv("soc_current_use_t_c", "t C/ha"),
                           f"t C per {per}", name=f"{anchor}-soc", height_in=height),
    ]


def page_charts(case: Case, frame: pd.DataFrame, res: Results, anchor: str) -> list[charts.Chart]:
    """The charts of a case's page: running total of cash, yield by stand age, soil carbon."""
    return _charts(case, frame, res, anchor, 0)


def _chart_view(chart: charts.Chart) -> dict[str, Any]:
    return {"title": chart.title, "alt": chart.alt, "svg": Markup(chart.svg)}


# ----------------------------------------------------------------------------- what moves the NPV
class _SensitivityViews:
    """The sensitivity block of one case's page at each layout step (None: no block).

    The sensitivity run (:func:`tea.analysis.sensitivity.run`, one vectorised
    evaluation of the full ledger) is made once; the chart is drawn per
    layout step, its rows as short as the other charts at that density, and
    at :data:`BESIDE` narrow, with two-line labels, for its place beside the
    yearly table.
    """

    def __init__(self, case: Case, given: charts.Chart | bool | None, anchor: str):
        if given is not None and not isinstance(given, (bool, charts.Chart)):
            raise TypeError("sensitivity: expected True, False, None or a tea.outputs.charts.Chart")
        self.case, self.anchor = case, anchor
        self.chart = given if isinstance(given, charts.Chart) else None
        shown = given if isinstance(given, bool) else (given is not None or "sensitivity" in case.values)
        self.run = None
        if shown and self.chart is None:
            from tea.analysis import sensitivity as sens

            self.run = sens.run(case, with_surface=False)
        #: what the fit cache tells layouts apart by
        self.key = self.chart.svg if self.chart is not None else ("tornado" if self.run is not None else None)
        #: the last layout step worth trying: the tornado can move beside the yearly table
        self.last_density = BESIDE if self.run is not None else MAX_DENSITY
        self._views: dict[tuple[int, bool], dict[str, Any]] = {}

    def view(self, density: int, split: bool) -> dict[str, Any] | None:
        """The block at a layout step; ``split``: the yearly table runs in two blocks side by side."""
        if self.chart is not None:
            return dict(_chart_view(self.chart), note="", beside=False)
        if self.run is None:
            return None
        key = (density, split and density >= BESIDE)
        if key not in self._views:
            self._views[key] = _tornado_view(self.case, self.run, self.anchor, density, split)
        return self._views[key]


#: width of the tornado chart [in]: below the other charts, beside a split yearly table, below a single one
TORNADO_WIDTH_IN, TORNADO_SPLIT_WIDTH_IN, TORNADO_SIDE_WIDTH_IN = 7.2, 2.35, 3.5


def _tornado_view(case: Case, run, anchor: str, density: int, split: bool) -> dict[str, Any]:
    """The tornado chart of NPV, ranked by swing, per area unit of the case, and its caption."""
    system, per = case.unit_system, _per(case)
    beside = density >= BESIDE

    def shown(value: float) -> float:
        return display.convert(float(value), "money/ha", system)[0]

    labels, low, high = [], [], []
    for i in run.order("npv"):
        m = run.moved[i]
        gap = "\n" if beside else " ("
        labels.append(print_minus(f"{m.label}{'*' if m.declared else ''}{gap}{m.range_text(case)}"
                                  + ("" if beside else ")")))
        low.append(shown(run.low["npv"][i]))
        high.append(shown(run.high["npv"][i]))
    width = (TORNADO_SPLIT_WIDTH_IN if split else TORNADO_SIDE_WIDTH_IN) if beside else TORNADO_WIDTH_IN
    title = ("What moves the NPV: each input moved alone to its low and its high value, the others at base; "
             "largest swing first")
    chart = charts.tornado(labels, low, high, shown(run.base["npv"]), f"{case.currency} per {per}",
                           name=f"{anchor}-tornado", width_in=width,
                           row_in=charts.TORNADO_ROW_IN * (1.85 if beside else 1.0),
                           scale=1.0 if beside else _CHART_SCALE[min(density, len(_CHART_SCALE) - 1)],
                           title=title if not beside else "What moves the NPV")
    note = _ranges_note(case, run)
    if beside:
        note = ("Each input moved alone to its low and its high value, the others at base; largest swing first. "
                + note)
    return dict(_chart_view(chart), note=note, beside=beside)


def _ranges_note(case: Case, run) -> str:
    """One line: where the low and high values come from (declared in the case, or a share of the base)."""
    from tea.inputs import riskspec

    spec = case.values.get("sensitivity") or {}
    share = spec.get("default_share", riskspec.DEFAULT_SHARE)
    whose = "the case's default share" if "default_share" in spec else "tea's default share"
    declared = sum(1 for m in run.moved if m.declared)
    bounded = any(not m.declared and ("clipped" in m.note or "raised" in m.note) for m in run.moved)
    shared = f"base \u2212/+ {display.percent(share, 0)} ({whose}" + (", within bounds)" if bounded else ")")
    head = "Low / high values: "
    if declared == len(run.moved):
        return "Low / high values as declared in the case's [sensitivity] section."
    if declared:
        return head + f"* declared in the case's [sensitivity] section; the others {shared}."
    return head + f"{shared}; a [sensitivity] section in the case can declare them."


def _case_page(case: Case, frame: pd.DataFrame, res: Results, anchor: str, density: int,
               sensitivity: _SensitivityViews | None = None) -> dict[str, Any]:
    """Everything one case's page shows, as plain values for the template."""
    per = _per(case)
    area_v, area_u = display.area(case.area_ha, case.unit_system)
    head = headline(case, res)
    rows, condensed = _cash_rows(case, frame)
    chunks = _chunks(rows)
    dm_unit = display.convert(1.0, "t DM/ha", case.unit_system)[1]
    money_unit = f"{case.currency}/{per}"
    return {
        "anchor": anchor,
        "density": int(min(max(density, 0), MAX_DENSITY)),
        "demo": bool(case.values.get("case.demo")),
        "title": case.name,
        "field_line": f"{case.values.get('field.name', '')} · {display.number(area_v)} {area_u} · {case.preset.title}",
        "notes": case.values.get("case.notes") or "",
        "verdict": head.verdict,
        "verdict_tone": head.tone,
        "sentence": head.sentence,
        "basis": (f"Figures per {per} unless marked whole field · money in {case.currency}, in today's money · "
                  f"discount rate {_rate_text(res)} · stand life {case.stand_life} years"),
        "tiles": _tiles(case, res),
        "loan": _loan_line(case, res),
        "charts": [_chart_view(c) for c in _charts(case, frame, res, anchor, density)],
        "sensitivity": sensitivity.view(density, len(chunks) > 1) if sensitivity is not None else None,
        "table": {
            "head": ("Year", "Sold", "Receipts", "Costs", "Net cash", "Running total"),
            "units": ("", dm_unit, money_unit, money_unit, money_unit, money_unit),
            "chunks": chunks,
            "condensed": condensed,
        },
        "assumptions": _assumptions(case, res),
        "warnings": [print_minus(w) for w in case.warnings],
        "cautions": list(CAUTIONS),
        "footer": {"version": res.version, "hash": res.case_hash, "source": Path(case.source).name,
                   "demo": bool(case.values.get("case.demo"))},
    }


def _chunks(rows: list[list[Cell]]) -> list[list[list[Cell]]]:
    """The table in one block, or two side by side when it is still long after condensing."""
    if len(rows) <= MAX_TABLE_ROWS + 2:
        return [rows]
    half = math.ceil(len(rows) / 2)
    return [rows[:half], rows[half:]]


# ----------------------------------------------------------------------------- the comparison
COMPARE_ROWS = (
    ("Money", ("npv", "npv_vs_current_use", "eav_vs_current_use", "irr", "current_margin", "establishment_cost")),
    ("Risk", ("payback_year", "discounted_payback_year", "peak_funding_need", "peak_funding_year",
              "breakeven_price", "breakeven_mature_yield_t_dm_per_ha")),
    ("Carbon", ("soc_gain_t_c", "ghg_net_t_co2e", "carbon_credit_pv")),
)
COMPARE_WHOLE = ("npv", "npv_vs_current_use", "peak_funding_need")
#: figures coloured by their sign (gain or loss) in the comparison
COMPARE_TONED = ("npv", "npv_vs_current_use", "eav_vs_current_use")
#: cases per column block of the side-by-side table
CASES_PER_TABLE = 4


def _overview(cases: Sequence[Case], ledgers: Sequence[pd.DataFrame], results: Sequence[Results],
              size: str) -> dict[str, Any]:
    cols = []
    for i, (case, res) in enumerate(zip(cases, results)):
        area_v, area_u = display.area(case.area_ha, case.unit_system)
        cols.append({
            "anchor": f"case-{i}",
            "number": i + 1,
            "title": case.name,
            "field": f"{case.values.get('field.name', '')}, {display.number(area_v)} {area_u}",
            "crop": case.preset.title,
            "demo": bool(case.values.get("case.demo")),
            "sentence": headline(case, res).sentence,
            "verdict_tone": headline(case, res).tone,
            "basis": f"per {_per(case)}, {case.currency}, {_rate_text(res)}, {case.stand_life} years",
            "hash": res.case_hash,
        })
    groups = []
    for title, names in COMPARE_ROWS:
        rows = []
        for name in names:
            cells = []
            for case, res in zip(cases, results):
                v = _value(res, name)
                text = "–" if v is None else _fig(case, res, name)
                cells.append(Cell(text, _tone(v) if name in COMPARE_TONED else ""))
            rows.append({"label": terminal.LABELS.get(name, name), "whole": False, "cells": cells})
            if name in COMPARE_WHOLE:
                rows.append({"label": f"{terminal.LABELS.get(name, name)}, whole field", "whole": True,
                             "cells": [Cell("–" if _value(r, name) is None else _fig(c, r, name, whole=True))
                                       for c, r in zip(cases, results)]})
        groups.append({"title": title, "rows": rows})
    blocks = []
    for start in range(0, len(cases), CASES_PER_TABLE):
        sl = slice(start, start + CASES_PER_TABLE)
        blocks.append({
            "cols": cols[sl],
            "groups": [{"title": g["title"], "rows": [dict(r, cells=r["cells"][sl]) for r in g["rows"]]}
                       for g in groups],
        })
    width = 7.2 if size == "A4" else 7.4
    chart = charts.compare_cumulative(_compare_panels(cases, ledgers, results), name="compare-cash",
                                      width_in=width, height_in=2.6)
    return {
        "count": len(cases),
        "cols": cols,
        "blocks": blocks,
        "chart": _chart_view(chart),
        "mixed": len({(c.currency, c.unit_system) for c in cases}) > 1,
        "demo": any(c.values.get("case.demo") for c in cases),
        "cautions": list(CAUTIONS),
        "version": __version__,
    }


def _compare_panels(cases, ledgers, results) -> list[tuple[str, list[charts.Series]]]:
    """One panel per currency and area unit, the cases in their order of appearance."""
    panels: dict[tuple[str, str], list[charts.Series]] = {}
    for i, (case, frame, res) in enumerate(zip(cases, ledgers, results)):
        unit = f"{case.currency} per {_per(case)}"
        values = [display.convert(float(x), "money/ha", case.unit_system)[0] for x in frame["cumulative_cash_flow"]]
        panels.setdefault((unit, case.unit_system), []).append(
            charts.Series(f"{i + 1}. {case.name}", [float(y) for y in frame["year"]], values,
                          _value(res, "payback_year")))
    return [(unit, series) for (unit, _), series in panels.items()]


def _meta(cases: Sequence[Case], results: Sequence[Results]) -> dict[str, Any]:
    """Document metadata (title, description, keywords): fixed, with no dates."""
    title = cases[0].name if len(cases) == 1 else f"Comparison of {len(cases)} cases"
    hashes = ", ".join(r.case_hash for r in results)
    return {
        "title": title,
        "description": f"Printed summary by tea {__version__}; case hash {hashes}. "
                       "Planning estimates, not financial, tax or agronomic advice.",
        "keywords": "tea, stand-life economics, " + hashes,
        "lang": "en",
    }
