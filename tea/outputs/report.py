"""The printed summary: one page per case, and the advisor's comparison report.

:func:`render_summary` writes one case's page and :func:`render_comparison`
several cases side by side followed by each case's page, as self-contained
HTML (inline SVG charts and CSS, a print stylesheet for A4 and Letter, and a
layout that reflows on a phone) or as PDF through WeasyPrint, an HTML-to-PDF
engine (fonts embedded). The format follows the file name: ``.pdf`` or ``.html``.

What a page shows is built in :mod:`tea.outputs.page` (one case),
:mod:`tea.outputs.whatmoves` (the tornado chart) and :mod:`tea.outputs.compare`
(the side-by-side overview); :mod:`tea.outputs.pdf` lays it out and writes the
PDF. This module ties them to the templates and the files.

Safety and reproducibility
--------------------------
* The jinja2 templates (``templates/`` next to the package) autoescape: a
  case's own words (name, field name, notes) cannot inject markup or script.
  Only chart SVG made by :mod:`tea.outputs.charts` is inserted as markup.
* The page refers to nothing outside itself, and the PDF engine is given a URL
  fetcher that refuses every URL but the ``data:`` URLs of the page's own charts.
* The same case gives the same bytes: no dates in the PDF, fixed chart ids.
* An existing file is replaced only with ``force=True``; writes are atomic.

One page, laid out once
-----------------------
A case's page must fit one sheet. Its charts are drawn once; the page is laid
out at the density its yearly table suggests and, only if it runs over, once
more at the density the measured overflow calls for (smaller type, same
charts); see :func:`tea.outputs.pdf.fit`. A page with the tornado chart of NPV
(see :func:`render_summary`) has one step more, :data:`BESIDE`: the densest
type with the chart moved from below the other charts to beside the yearly
table. A comparison is made in pieces, the overview and each case's page on
their own: each piece is built, fitted once whatever the others need, and
written as PDF in a worker process (:mod:`tea.outputs.workers`), and the
pieces' PDFs are joined in order (:func:`tea.outputs.pdf.join`), so that
memory stays that of a few pages however many cases there are.
"""

from __future__ import annotations

import warnings
from functools import lru_cache
from pathlib import Path
from typing import Any, Sequence

import pandas as pd

from tea import __version__
from tea.core.errors import OutputError
from tea.core.files import atomic_write, atomic_write_text, check_target
from tea.inputs.case import Case
from tea.model.results import Results
from tea.outputs import chart_library, charts, compare, pdf, pdf_page, workers
from tea.outputs.page import BESIDE, CHART_SCALE, MAX_DENSITY, TYPE_PT, CasePage, page_charts, print_minus  # noqa: F401
from tea.outputs.page import page_chart_specs
from tea.outputs.whatmoves import SensitivityViews, shows_block


#: the jinja2 templates and the page's CSS (package data of ``tea.templates``)
TEMPLATES = pdf_page.templates_folder()
PAGE_SIZES = {"a4": "A4", "letter": "Letter"}

#: what the summaries made in this process have said once already
_said: set[tuple[Any, ...]] = set()

#: the density each recently laid-out page needed, so that HTML made after the PDF reuses it
_fit_cache: dict[tuple[Any, ...], Any] = {}
_FIT_CACHE_SIZE = 64


# ----------------------------------------------------------------------------- public API
@pdf.fewer_collections()
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
    # the charts are drawn in one process (one standing by with matplotlib loaded, if the command line started
    # one; else one forked now) while the page is laid out in another (one standing by with the PDF engine
    # started, if the command line started one; else this one) with a placeholder of each chart's size; the
    # charts are drawn in after. A worker standing by is handed the page's own charts at once, and the
    # tornado chart once the sensitivity run has made it
    first = page_chart_specs(case, ledger, results, "case-0")
    drawing = workers.handed_over(charts.draw_all_and_sent, first, role="charts") \
        if workers.stands_by("charts") else None
    views = SensitivityViews(case, sensitivity, "case-0")
    tornado = views.below_spec()
    more = [tornado] if tornado is not None else []
    if drawing is not None:
        drawing.send(more)
    else:
        drawing = workers.elsewhere(charts.draw_for_engine, first + more, role="charts")
    specs = first + more

    def page_with(shown: list[charts.Chart]) -> CasePage:
        """The page with these charts (drawn, or their outlines), the tornado chart of NPV last."""
        if tornado is not None:
            views.keep_below(shown[-1])
        return CasePage(case, ledger, results, "case-0", views, shown[:3])

    meta = _meta([case], [results])
    key = ("summary", case.hash, case.source, size, views.key)
    if kind == "html" and key in _fit_cache:  # the fit of the same page, just measured
        return atomic_write_text(path, _summary_page(page_with(drawing()), size, meta, _fit_cache[key], False),
                                 force=True)
    outlines = [spec.outline() for spec in specs]
    page = page_with(outlines)
    start = page.start_density(size)

    def html_at(density: int) -> str:
        return _summary_page(page, size, meta, density, True)

    laying = workers.handed_over(
        pdf_page.lay_out, (page.anchor, start, page.last_density, page.first_density, TYPE_PT, CHART_SCALE),
        html_at(start), {chart.name: chart.placeholder for chart in outlines}, role="page", answer=html_at)
    if not laying.in_worker:
        pdf.prepare()  # while the charts are drawn
    made = drawing()
    laying.send({chart.name: chart.engine_svg for chart in made})

    def laid_out(tmp: Path | None) -> tuple[CasePage, int]:
        """Lay the page out (and write it as PDF to ``tmp``): the page with its charts and its density."""
        laying.send(None if tmp is None else str(tmp))
        density, pages = laying()
        if pages > 1 and sensitivity is None and tornado is not None:
            return _without_tornado(tmp)
        if pages > 1:
            _runs_over(case, pages)
        _remember(key, density)
        return page_with(made), density

    def _without_tornado(tmp: Path | None) -> tuple[CasePage, int]:
        """The page that ran over one sheet at its densest, laid out again without the tornado chart the case's
        [sensitivity] section asked for (here, in this process: it is rare)."""
        if ("left off", key) not in _said:  # once, though the PDF and the HTML are both made
            _said.add(("left off", key))
            warnings.warn(f"{case.source}: the chart of what moves the NPV is left off the printed summary so that "
                          f"it fits one sheet (its {len(ledger)} yearly rows take the room); `tea sensitivity` "
                          "shows it", stacklevel=3)
        plain = CasePage(case, ledger, results, "case-0", SensitivityViews(case, False, "case-0"), made[:3])
        density, doc = _fit(plain, size, lambda d: _summary_page(plain, size, meta, d, True))
        if tmp is not None:
            pdf.write_pdf(doc, tmp)
        return plain, density

    if kind == "pdf":
        return atomic_write(path, laid_out, force=True)
    shown, density = laid_out(None)
    return atomic_write_text(path, _summary_page(shown, size, meta, density, False), force=True)


@pdf.fewer_collections()
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
    meta = _meta(cases, results)
    key = ("compare", tuple((c.hash, c.source, shows_block(c, sensitivity)) for c in cases), size)

    def case_page(i: int) -> CasePage:
        anchor = f"case-{i}"
        return CasePage(cases[i], ledgers[i], results[i], anchor, SensitivityViews(cases[i], sensitivity, anchor))

    def whole(densities: Sequence[int]) -> str:
        overview = compare.overview(cases, ledgers, results, size)
        return _render("compare.html.j2", page_size=size, overview=overview, meta=meta, embed=False, page_label="",
                       pages=[case_page(i).at(d) for i, d in enumerate(densities)], generator=f"tea {__version__}")

    if kind == "html" and key in _fit_cache:  # the fit of the same report, just measured
        return atomic_write_text(path, whole(_fit_cache[key]), force=True)

    def fitted(i: int):
        """The page of case i, fitted to its sheet: (density, laid-out document)."""
        page, label = case_page(i), f"case {i + 1} of {len(cases)}"

        def html_at(d: int) -> str:
            return _render("summary.html.j2", page_size=size, page=page.at(d), meta=meta, embed=True,
                           page_label=label, generator=f"tea {__version__}")

        return _fit(page, size, html_at)

    batch = pages_per_piece(len(cases))
    batches = [range(start, min(start + batch, len(cases))) for start in range(0, len(cases), batch)]

    def piece(k: int) -> tuple[list[int], bytes | None]:
        """Piece 0 the overview, piece k the pages of the k-th batch of cases, each fitted to its own sheet:
        laid out, and written as one PDF for a PDF."""
        if k == 0:
            overview = compare.overview(cases, ledgers, results, size)

            def overview_html(**footer) -> str:
                return _render("compare.html.j2", page_size=size, overview=overview, meta=meta, embed=True, pages=[],
                               generator=f"tea {__version__}", **footer)

            # laid out apart from the case pages, so a page number counts the overview's own pages: a longer
            # overview numbers its pages as its own; one page says what it is and what follows instead of
            # "page 1 of 1". The footer (a page margin box) cannot change the number of pages: the overview is
            # laid out with the footer its number of cases suggests, and again only if that proves wrong
            one_page = dict(page_label=f"overview of {len(cases)} cases; one page per case follows")
            numbered = dict(page_label="", page_scope=f"overview of {len(cases)} cases")
            guess = len(cases) <= OVERVIEW_ON_ONE_PAGE
            doc = pdf.layout(overview_html(**(one_page if guess else numbered)), _stylesheets())
            if (len(doc.pages) == 1) != guess:
                doc = pdf.layout(overview_html(**(numbered if guess else one_page)), _stylesheets())
            return [], (pdf.write_pdf(doc) if kind == "pdf" else None)
        made = [fitted(i) for i in batches[k - 1]]
        if kind != "pdf":
            return [d for d, _ in made], None
        docs = [doc for _, doc in made]
        return [d for d, _ in made], pdf.write_pdf(docs[0].copy([p for doc in docs for p in doc.pages]))

    chart_library.load()  # the chart library and the engine's start-up paid once, before the pieces go to workers
    pdf.prepare()
    densities: list[int] = []

    def parts():
        for made, data in workers.each(1 + len(batches), piece):
            densities.extend(made)
            if data is not None:
                yield data
        _remember(key, tuple(densities))

    if kind == "html":
        for _ in parts():
            pass
        return atomic_write_text(path, whole(densities), force=True)
    return atomic_write(path, lambda tmp: pdf.join(parts(), tmp), force=True)


#: a comparison of at most this many cases (two or three crops for one field) is expected to have a one-page
#: overview, and its footer is chosen so first; a wrong guess costs the overview one more layout, never a
#: wrong footer
OVERVIEW_ON_ONE_PAGE = 3

#: case pages written together as one piece of a comparison, at most: one write and one join for several
#: pages (fewer font subsets, less joining), still a few laid-out pages in memory at a time
MOST_PAGES_PER_PIECE = 8


def pages_per_piece(cases: int) -> int:
    """Case pages per piece of a comparison of ``cases`` cases: about an eighth of them, 1 to
    :data:`MOST_PAGES_PER_PIECE`; it depends on the number of cases alone, so the file does not depend on the
    number of workers."""
    return max(1, min(MOST_PAGES_PER_PIECE, cases // 8))


def summary_html(case: Case, ledger: pd.DataFrame, results: Results, page_size: str | None = None,
                 density: int = 0, sensitivity: charts.Chart | bool | None = None) -> str:
    """One case's page as an HTML string at a given density (no fitting, no file).

    ``sensitivity`` as for :func:`render_summary`.
    """
    size = _page_size(page_size, case)
    page = CasePage(case, ledger, results, "case-0", SensitivityViews(case, sensitivity, "case-0"))
    return _render("summary.html.j2", page_size=size, page=page.at(density), meta=_meta([case], [results]),
                   embed=False, page_label="", generator=f"tea {__version__}")


# ----------------------------------------------------------------------------- files and templates
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
        bytecode_cache=_compiled_templates(),
        autoescape=True,  # every template, whatever its name: case text is never markup
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        finalize=_shown,  # every value a template prints: control and direction-override characters escaped
    )
    return env


def _compiled_templates():
    """Where compiled templates are kept between runs: jinja2's own cache of them in the user's directory
    under the system's temporary folder (made by jinja2 readable by the user alone, and refused if anyone
    else owns it), keyed by each template's text. Compiling the page's templates is about a twentieth of
    the time of a page. None (each run compiles them) where that folder cannot be made or is not safe; a
    compiled template that cannot be stored is compiled again next time."""
    import jinja2

    class Kept(jinja2.FileSystemBytecodeCache):
        def dump_bytecode(self, bucket) -> None:
            try:
                super().dump_bytecode(bucket)
            except OSError:  # a full or read-only disk: the template is compiled, only not kept
                pass

    try:
        return Kept()
    except (OSError, RuntimeError):  # RuntimeError: jinja2 found the folder unsafe
        return None


def _shown(value: Any) -> Any:
    """A value as a page shows it: text with control and bidirectional-override characters made visible
    (:func:`tea.core.safe_text.terminal`), so case text cannot reorder or hide the text around it;
    markup made here (the charts) as it is."""
    from markupsafe import Markup

    from tea.core.safe_text import terminal

    if isinstance(value, str) and not isinstance(value, Markup):
        return terminal(value)
    return value


def _stylesheets() -> list[Any]:
    return pdf_page.stylesheets()


def _fit(page: CasePage, size: str, html_at, charts=None, images=None) -> tuple[int, Any]:
    """A case page fitted to one sheet of paper ``size``: (density, laid-out document); ``html_at(d)`` gives
    its HTML at density d; ``charts`` and ``images`` as for :func:`tea.outputs.pdf.layout`."""
    density, doc = pdf.fit(html_at, page.anchor, page.start_density(size), page.last_density, TYPE_PT,
                           CHART_SCALE, _stylesheets(), floor=page.first_density, charts=charts, images=images)
    if len(doc.pages) > 1:
        _runs_over(page.case, len(doc.pages))
    return density, doc


def _runs_over(case: Case, pages: int) -> None:
    warnings.warn(f"{case.source}: the printed summary takes {pages} pages even at its densest layout",
                  stacklevel=3)


def _summary_page(page: CasePage, size: str, meta: dict[str, Any], density: int, embed: bool) -> str:
    """One case's page as HTML at ``density``: for the PDF engine (``embed``: the charts as images, the
    stylesheet handed over parsed) or as the HTML file."""
    return _render("summary.html.j2", page_size=size, page=page.at(density), meta=meta, embed=embed,
                   page_label="", generator=f"tea {__version__}")


def _render(template: str, **context: Any) -> str:
    """A template rendered; for the PDF engine (``embed``) with its units kept whole on a line."""
    html = _environment().get_template(template).render(**context)
    return pdf.units_kept_together(html) if context.get("embed") else html


def _remember(key: tuple[Any, ...], value: Any) -> None:
    if len(_fit_cache) >= _FIT_CACHE_SIZE:
        _fit_cache.clear()
    _fit_cache[key] = value


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
