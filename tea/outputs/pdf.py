"""Laying HTML out as pages and writing PDF, with WeasyPrint (an HTML-to-PDF engine).

A case's page must fit one sheet. :func:`fit` lays the page out once at the
density its content suggests and measures it (the height of the content
against the room on the sheet, from anchors placed in the page). If it fits
and the measure shows that the next less dense layout could not, that one
layout is the page. If it runs over, or a less dense layout might fit, it
lays the page out once more at the density the measure calls for, and steps
on one density at a time only when that estimate falls short.

* The page refers to nothing outside itself: the engine's URL fetcher refuses
  every URL except ``data:`` (the charts, embedded in the page) and the
  page's own charts named by their outlines while they are being drawn,
  which the layout's ``charts`` function gives (:func:`layout`): the page is
  laid out with a placeholder of each chart's size and the drawn chart is put
  in its place before the PDF is written (:func:`draw_in`).
* The same HTML gives the same bytes: no dates in the PDF, and embedded font
  subsets stamped with a fixed time.
"""

from __future__ import annotations

import contextlib
import io
import logging
import os
import re
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any, Callable, Iterable, Mapping, Sequence

#: CSS px per inch (CSS Values and Units Level 3, sec. 5.2: 1in = 96px)
PX_PER_IN = 96.0
#: share of the sheet a density is chosen to fill at most (a margin for the estimate)
FILL = 0.98
#: text height goes as the type size to this power: smaller type also wraps into fewer lines (1.1 to 1.6
#: measured on the demo pages between densities; near the lower end, so that the chosen density fits)
TEXT_EXPONENT = 1.25
#: the least power the text height is taken to go with the type size (below the least measured, 1.1): a less
#: dense layout whose text would be too tall even so is not tried
LEAST_TEXT_EXPONENT = 1.0
#: font subsets are stamped with this time [s since 1970] unless SOURCE_DATE_EPOCH is set:
#: the font subsetter otherwise writes the current time into each embedded font
FONT_EPOCH = "0"


@lru_cache(maxsize=1)
def _engine():
    """WeasyPrint, its shared font configuration and the URL fetcher of the pages (:func:`_fetcher`)."""
    weasyprint = _import_weasyprint()
    from weasyprint.text.fonts import FontConfiguration

    from tea.outputs import svg_text

    svg_text.install()  # the charts' labels laid out a line at a time, not a letter at a time

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    return weasyprint, FontConfiguration(), _fetcher(weasyprint)


def _fetcher(weasyprint):
    """A URL fetcher that allows only ``data:`` URLs and the page's charts named by their outlines.

    A chart not drawn yet is named in the page by its outline's URL
    (:attr:`tea.outputs.charts.Chart.src`); when the engine reaches it, the
    fetcher asks the ``charts`` function of the layout in progress for its SVG
    (see :func:`layout`): the chart, or a placeholder of its size. A chart it
    cannot give stops the layout.
    """
    from tea.outputs.chart_markup import LATER

    urls = weasyprint.urls

    class PageFetcher(urls.URLFetcher):
        charts: Callable[[str], str] | None = None

        def fetch(self, url, headers=None):
            if url.startswith(LATER + ":"):
                name = url[len(LATER) + 1:]
                try:
                    svg = self.charts(name) if self.charts is not None else None
                except Exception as exc:  # the drawing failed: the page cannot be made
                    raise urls.FatalURLFetchingError(f"chart {name!r}: {exc}") from exc
                if not svg:
                    raise urls.FatalURLFetchingError(f"chart {name!r}: not drawn")
                return urls.URLFetcherResponse(url, body=svg.encode("utf-8"),
                                               headers={"Content-Type": "image/svg+xml"})
            return super().fetch(url, headers)

    return PageFetcher(allowed_protocols=("data",))


#: allocations between two runs of the cyclic garbage collector while pages are made (Python's default: 700)
GC_THRESHOLD = 10_000


@contextlib.contextmanager
def fewer_collections():
    """Run the cyclic garbage collector less often while pages are made (also a function decorator).

    A layout makes hundreds of thousands of objects that live until the page
    is written, and at Python's default every few hundred allocations the
    collector scans them again: about a sixth of the time of a page. The
    collector's older generations still follow at their usual ratios, so
    garbage is collected as before, in fewer, larger passes. What exists
    when the pages start (the loaded libraries, the cases and their ledgers)
    is set aside meanwhile (:func:`gc.freeze`): a full collection does not
    scan it again and again; it is handed back to the collector at the end.
    """
    import gc

    before = gc.get_threshold()
    gc.set_threshold(max(before[0], GC_THRESHOLD), *before[1:])
    mine = gc.get_freeze_count() == 0  # a caller's own frozen objects are left as they are
    if mine:
        gc.freeze()
    try:
        yield
    finally:
        if mine:
            gc.unfreeze()
        gc.set_threshold(*before)


@lru_cache(maxsize=1)
def prepare() -> None:
    """Start the engine once (WeasyPrint imported, fonts configured, a first line laid out), so that
    processes forked from this one start with it."""
    layout("<p>tea</p>")


def _import_weasyprint():
    """``import weasyprint``, its system libraries looked up in the linker's cache read once.

    WeasyPrint tries several names for each library (pango, harfbuzz, ...), and
    for a bare name cffi asks :func:`ctypes.util.find_library`, which on Linux
    runs ``ldconfig -p`` and then, for a name it does not find there, the C
    compiler and the linker: most of a second of start-up for the names that
    do not exist on this system (other platforms' spellings, an optional
    library). During the import a name is looked up in one listing of
    ``ldconfig -p`` instead; if the import fails that way (a library found only
    by the compiler's search), it is imported again with the standard lookup.
    """
    import sys

    if "weasyprint" in sys.modules:
        return sys.modules["weasyprint"]
    import ctypes.util

    listing = _linker_cache() if sys.platform.startswith("linux") else None
    if listing is None:
        import weasyprint

        return weasyprint
    standard = ctypes.util.find_library
    ctypes.util.find_library = lambda name: _from_listing(listing, name)
    try:
        with contextlib.redirect_stdout(io.StringIO()):  # WeasyPrint prints advice before it gives up
            import weasyprint
        return weasyprint
    except OSError:
        for name in [m for m in sys.modules if m == "weasyprint" or m.startswith("weasyprint.")]:
            del sys.modules[name]
    finally:
        ctypes.util.find_library = standard
    import weasyprint

    return weasyprint


def _linker_cache() -> bytes | None:
    """The output of ``ldconfig -p`` (the libraries the dynamic linker knows), or None."""
    import subprocess

    try:
        done = subprocess.run(["/sbin/ldconfig", "-p"], stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                              stderr=subprocess.DEVNULL, env={"LC_ALL": "C", "LANG": "C"}, timeout=10, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    return done.stdout if done.returncode == 0 and done.stdout else None


def _from_listing(listing: bytes, name: str) -> str | None:
    """A library's file name as :func:`ctypes.util.find_library` finds it in ``ldconfig -p`` (its own rule)."""
    import ctypes
    import re

    machine = os.uname().machine + ("-64" if ctypes.sizeof(ctypes.c_void_p) == 8 else "-32")
    abi = {"x86_64-64": "libc6,x86-64", "ppc64-64": "libc6,64bit", "sparc64-64": "libc6,64bit",
           "s390x-64": "libc6,64bit", "ia64-64": "libc6,IA-64"}.get(machine, "libc6")
    found = re.search(os.fsencode(r"\s+(lib%s\.[^\s]+)\s+\(%s" % (re.escape(name), abi)), listing)
    return os.fsdecode(found.group(1)) if found else None


#: the parts of an HTML page that are not text: style and script elements, tags, comments
_NOT_TEXT = re.compile(r"(<style[\s\S]*?</style>|<script[\s\S]*?</script>|<!--[\s\S]*?-->|<[^>]*>)", re.I)
#: where a line must not break in a unit: after a slash between two words ("USD/short ton"); inside a
#: unit of several words ("short ton", "t DM"); before a per cent sign ("5.5 %"); around the slash of a
#: division ("1.07 / 1.025"). A number may still end a line before its unit: the page's narrow tiles
#: would otherwise take a line more
_UNIT_JOINS = (
    (re.compile(r"(?<=[^\s<>])/(?=[^\s<>])"), "/\u2060"),  # U+2060 WORD JOINER: no break, no width
    (re.compile(r"\b(short|metric|long) (tons?)\b"), "\\1\u00a0\\2"),
    (re.compile(r"\b(t|tons?|kg|lb|g)(?: )(DM|C|CO2e|N)\b"), "\\1\u00a0\\2"),
    (re.compile(r"(?<=\d) %"), "\u00a0%"),
    (re.compile(r"(?<=[\d)]) / (?=[\d(])"), "\u00a0/\u00a0"),  # a division between two numbers: "1.07 / 1.025"
)


def units_kept_together(html: str) -> str:
    """The page's text with no line break inside a unit (:data:`_UNIT_JOINS`): for the PDF engine, which
    would otherwise break a line after the slash of "USD/short ton DM". The joiner and the no-break spaces
    read as nothing and as a space in the PDF's text (what a reader copies or searches)."""
    parts = _NOT_TEXT.split(html)
    for i in range(0, len(parts), 2):  # even pieces are text; odd ones the markup around it
        text = parts[i]
        for pattern, joined in _UNIT_JOINS:
            text = pattern.sub(joined, text)
        parts[i] = text
    return "".join(parts)


@lru_cache(maxsize=4)
def stylesheet(text: str):
    """A stylesheet parsed once per process (a :class:`weasyprint.CSS`), to hand to :func:`layout`."""
    weasyprint, fonts, fetcher = _engine()
    return weasyprint.CSS(string=text, font_config=fonts, url_fetcher=fetcher)


def layout(html: str, stylesheets: Sequence[Any] = (), images: dict | None = None,
           charts: Callable[[str], str] | None = None):
    """Lay the HTML out as pages (a :class:`weasyprint.Document`).

    ``stylesheets`` come after the page's own ``<style>``; ``images`` is a
    dictionary the engine keeps the page's images in (its charts, parsed),
    shared by layouts of the same page so that each is parsed once;
    ``charts`` gives the engine's SVG of a chart by name
    (:attr:`tea.outputs.charts.Chart.engine_svg`), for the charts the page
    names by their outlines (:attr:`tea.outputs.charts.Chart.src`): the
    chart, or a placeholder of its size
    (:attr:`tea.outputs.charts.Chart.placeholder`), for which the chart is
    drawn in once drawn (:func:`draw_in`).
    """
    weasyprint, fonts, fetcher = _engine()
    fetcher.charts = charts
    try:
        return weasyprint.HTML(string=html, base_url=None, url_fetcher=fetcher).render(
            font_config=fonts, stylesheets=list(stylesheets), cache=images if images is not None else {})
    finally:
        fetcher.charts = None


def draw_in(images: dict, charts: Mapping[str, str]) -> bool:
    """Put drawn charts in place of their placeholders in the pages laid out with ``images`` (the dictionary
    given to :func:`layout`): ``charts`` gives the engine's SVG of each by name
    (:attr:`tea.outputs.charts.Chart.engine_svg`). False, and the pages not all changed, if the engine's
    pictures cannot be redrawn so (the pages must then be laid out with the charts).

    The page's layout took only the placeholder's size, which is the drawn
    chart's; the engine draws a picture when the PDF is written, from the SVG
    it holds, which is replaced here (the engine's own SVG picture, made
    again with the drawn chart).
    """
    from xml.etree import ElementTree

    from tea.outputs.chart_markup import LATER

    for url, image in images.items():
        if not url.startswith(LATER + ":"):
            continue
        svg = charts.get(url[len(LATER) + 1:])
        try:
            image.__init__(ElementTree.fromstring(svg.encode("utf-8")), image._base_url, image._url_fetcher,
                           image._context)
        except Exception:  # noqa: BLE001 - a version of the engine whose pictures are made otherwise
            return False
    return True


def write_pdf(doc, target: Path | None = None) -> bytes | None:
    """Write a laid-out document as PDF (to ``target``, or returned as bytes): fonts embedded as subsets,
    no dates anywhere.

    The subsetter reads the reproducible-builds variable ``SOURCE_DATE_EPOCH``
    for the timestamp of each subset; it is set for the duration of the write
    when the environment does not set it.
    """
    given = os.environ.get("SOURCE_DATE_EPOCH")
    if given is None:
        os.environ["SOURCE_DATE_EPOCH"] = FONT_EPOCH
    try:
        return doc.write_pdf(None if target is None else str(target))
    finally:
        if given is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)


def join(parts: Iterable[bytes], target: Path) -> None:
    """One PDF of the pages of several, in order, with the first one's metadata (title, description).

    Each part keeps its own embedded font subsets and its outline; nothing in
    the result depends on the time or on chance (no file identifier is added).
    The joining is pypdf's (a PDF library).
    """
    from pypdf import PdfReader, PdfWriter

    writer = PdfWriter()
    metadata = None
    for data in parts:
        reader = PdfReader(io.BytesIO(data))
        if metadata is None:
            metadata = {k: v for k, v in (reader.metadata or {}).items()}
        writer.append(reader)
    if metadata:
        writer.add_metadata(metadata)
    with open(target, "wb") as out:
        writer.write(out)


# ----------------------------------------------------------------------------- fitting one sheet
@dataclass(frozen=True)
class Measure:
    """How a laid-out case page sits on its sheets [CSS px].

    ``height`` is the whole content from the page's start anchor to its end
    anchor (over as many sheets as it takes), ``fixed`` the part that does
    not scale with the type (the charts), ``room`` the content height of one
    sheet.
    """

    pages: int
    height: float
    fixed: float
    room: float


def measure(doc, anchor: str) -> Measure:
    """Measure the page ``anchor`` in a laid-out document (anchors ``anchor``, ``anchor-end``,
    ``anchor-fixed`` and ``anchor-fixed-end``)."""
    where = {}
    for k, page in enumerate(doc.pages):
        for name, (_x, y, *_rest) in page.anchors.items():
            if name.startswith(anchor):
                where.setdefault(name, (k, y))  # where it starts (a box split over two sheets is on both)
    (k0, y0), (k1, y1) = where[anchor], where[f"{anchor}-end"]
    box = doc.pages[k0]._page_box
    top = box.margin_top + box.border_top_width + box.padding_top
    room = box.height  # the content box's height: the sheet less its margins
    height = (k1 - k0) * room + (y1 - top) - (y0 - top)
    fixed = 0.0
    if f"{anchor}-fixed" in where and f"{anchor}-fixed-end" in where:
        (f0, a), (f1, b) = where[f"{anchor}-fixed"], where[f"{anchor}-fixed-end"]
        fixed = (f1 - f0) * room + b - a
    return Measure(k1 - k0 + 1, height, max(0.0, fixed), room)


def estimated(m: Measure, current: int, d: int, type_scale: Sequence[float], chart_scale: Sequence[float],
              exponent: float) -> float:
    """The height [CSS px] the page measured at density ``current`` is expected to take at density ``d``: its
    charts scaled exactly, its text with the type size to the power ``exponent``."""
    fixed = m.fixed * chart_scale[d] / chart_scale[current]
    return fixed + (m.height - m.fixed) * (type_scale[d] / type_scale[current]) ** exponent


def choose(m: Measure, current: int, type_scale: Sequence[float], chart_scale: Sequence[float], last: int,
           fill: float = FILL) -> int:
    """The lowest density above ``current`` whose estimated height fills at most ``fill`` of the sheet.

    The charts scale with ``chart_scale[d]``; the text with the type size
    ``type_scale[d]`` to the power :data:`TEXT_EXPONENT` (smaller type also
    wraps into fewer lines). Beyond the last type size the estimate cannot
    tell: the last density.
    """
    for d in range(current + 1, min(last, len(type_scale) - 1) + 1):
        if estimated(m, current, d, type_scale, chart_scale, TEXT_EXPONENT) <= fill * m.room:
            return d
    return last


def could_fit(m: Measure, current: int, floor: int, type_scale: Sequence[float],
              chart_scale: Sequence[float]) -> int:
    """The lowest density from ``floor`` up to ``current`` at which the page measured at ``current`` might
    fit: its charts scaled exactly, its text grown by the type size to the power
    :data:`LEAST_TEXT_EXPONENT` (the least it can grow). ``current`` when no less dense layout can fit."""
    for d in range(max(floor, 0), current):
        if estimated(m, current, d, type_scale, chart_scale, LEAST_TEXT_EXPONENT) <= m.room:
            return d
    return current


def fit(html_at: Callable[[int], str], anchor: str, start: int, last: int, type_scale: Sequence[float],
        chart_scale: Sequence[float], stylesheets: Sequence[Any] = (), floor: int | None = None,
        charts: Callable[[str], str] | None = None, images: dict | None = None) -> tuple[int, Any]:
    """The density at which the page fits one sheet, and its layout: the least dense from ``floor`` that
    fits, as far as the measures of the layouts made tell.

    The search starts at ``start`` (the density the page's content suggests;
    ``floor``, the least dense allowed, defaults to it). One layout when the
    page fits there and a less dense one cannot; else one measure, one
    estimate and one more layout, stepping on only if the estimate fell
    short. The same page gives the same density in any process. ``charts`` and
    ``images`` as for :func:`layout`.
    """
    floor = start if floor is None else min(floor, start)
    density, images = start, ({} if images is None else images)
    doc = layout(html_at(density), stylesheets, images, charts)
    if len(doc.pages) == 1:
        fits, fitting = density, doc  # the densest layout known to fit
        density = could_fit(measure(doc, anchor), density, floor, type_scale, chart_scale)
        while density < fits:
            doc = layout(html_at(density), stylesheets, images, charts)
            if len(doc.pages) == 1:
                return density, doc
            density = min(choose(measure(doc, anchor), density, type_scale, chart_scale, last), fits)
        return fits, fitting
    if density >= last:
        return _checked(density, doc)
    density = choose(measure(doc, anchor), density, type_scale, chart_scale, last)
    while True:
        doc = layout(html_at(density), stylesheets, images, charts)
        if len(doc.pages) == 1 or density >= last:
            return _checked(density, doc)
        density += 1


def _checked(density: int, doc) -> tuple[int, Any]:
    """The densest layout tried, whether or not it fits: the caller says so if it runs over (it knows the
    case)."""
    return density, doc
