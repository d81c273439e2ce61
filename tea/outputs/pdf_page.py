"""One case's page laid out and written as PDF, in a process that loads only the PDF engine.

This is the part of :func:`tea.outputs.report.render_summary` that can run
in a worker started before the case is even read (:func:`warm_up`, by the
command line: :func:`tea.outputs.workers.stand_by`): it needs neither the
model, nor its tables, nor the chart library, so the worker loads the PDF
engine while the command loads those and computes the case. It is handed
the page's HTML at the density the search for a fit starts from, asks for
the HTML at any other density it tries (:func:`tea.outputs.workers.ask`),
lays the page out with a placeholder of each chart's size, is sent the
drawn charts and draws them in (:func:`tea.outputs.pdf.draw_in`), and is
sent the file to write.
"""

from __future__ import annotations

from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any, Sequence

from tea.outputs import pdf, workers


def templates_folder() -> Path:
    """The templates folder: the top-level ``templates/`` of the source tree, installed as ``tea.templates``."""
    return Path(str(resources.files("tea.templates")))


@lru_cache(maxsize=1)
def stylesheets() -> list[Any]:
    """The page's stylesheet for the PDF engine, parsed once (the HTML for it carries only the paper's rules)."""
    return [pdf.stylesheet((templates_folder() / "report.css").read_text(encoding="utf-8"))]


def lay_out(fitting: tuple[str, int, int, int, Sequence[float], Sequence[float]], first: str,
            placeholders: dict[str, str]) -> tuple[int, int]:
    """Fit a case's page to one sheet and write it as PDF; the density it took and its number of pages (more
    than one: the page did not fit even at its densest).

    Parameters
    ----------
    fitting : (anchor, start, last, floor, type scale, chart scale)
        What :func:`tea.outputs.pdf.fit` takes: the page's anchor, the
        densities to start from, to try at most and at least, and the type
        and chart sizes of each density.
    first : str
        The page's HTML at the start density (the charts named by their
        outlines); at another density it is asked for (:func:`tea.outputs.workers.ask`).
    placeholders : dict
        An empty SVG picture of each chart's size, by name.

    Then received (:func:`tea.outputs.workers.received`): the engine's SVG of each
    drawn chart by name, and the file to write the PDF to (None: no PDF).
    """
    anchor, start, last, floor, type_scale, chart_scale = fitting
    images: dict[str, Any] = {}

    def html_at(density: int) -> str:
        return first if density == start else workers.ask(density)

    with pdf.fewer_collections():
        density, doc = pdf.fit(html_at, anchor, start, last, type_scale, chart_scale, stylesheets(), floor=floor,
                               charts=placeholders.get, images=images)
        drawn = workers.received()
        if not pdf.draw_in(images, drawn):
            doc = pdf.layout(html_at(density), stylesheets(), {}, drawn.get)
        target = workers.received()
        if target is not None:
            pdf.write_pdf(doc, Path(target))
    return density, len(doc.pages)


def warm_up() -> None:
    """Start what laying out a page takes (the PDF engine, the page's stylesheet), e.g. in a worker that will
    lay out a page."""
    pdf.prepare()
    stylesheets()
