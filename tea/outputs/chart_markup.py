"""A chart as the page holds it: its SVG markup, made inline-ready, and its outline before it is drawn.

This module does not load the chart library: a process that only lays a page
out (:mod:`tea.outputs.pdf_page`) or names its charts by their outlines uses it
alone. The charts themselves are drawn by :mod:`tea.outputs.charts`, whose
SVG output :func:`inline` and :func:`titled` make ready for the page:

* no XML prolog, DOCTYPE or metadata block (nothing refers outside the page);
* every ``id`` prefixed with the chart's own name, so several charts can share
  one HTML document without their clip paths and glyphs colliding;
* no group or transform that draws nothing (:func:`tidy`);
* an accessible name inside the SVG itself.
"""

from __future__ import annotations

import base64
import re
from dataclasses import dataclass
from functools import cached_property
from xml.sax.saxutils import escape as xml_escape

#: the URL scheme of a chart drawn while the page is laid out (:attr:`Chart.src`)
LATER = "tea-chart"


@dataclass(frozen=True)
class Chart:
    """One chart ready for the page.

    Attributes
    ----------
    name : str
        Short identifier, also the prefix of every SVG ``id``.
    title : str
        Heading shown above the chart (plain text; the template escapes it).
    svg : str
        The SVG markup (trusted: produced by :func:`tea.outputs.charts.svg_of`); empty in a chart's outline
        (:meth:`tea.outputs.charts.Spec.outline`), which is drawn later.
    alt : str
        A sentence describing what the chart shows, for readers who cannot see it.
    ticks : tuple of (axis, value, label)
        Every tick drawn, with its value and its label as printed (``"x"`` or
        ``"y"`` of each axes in turn), read back from matplotlib after drawing.
    size_pt : (str, str), optional
        An outline's width and height [pt], written as the drawn SVG will give them.
    """

    name: str
    title: str
    svg: str
    alt: str
    ticks: tuple[tuple[str, float, str], ...] = ()
    size_pt: tuple[str, str] | None = None

    @property
    def placeholder(self) -> str:
        """An outline as an empty SVG picture of the size the drawn chart will have: the PDF engine can lay
        the page out with it, and draw the chart in its place once it is drawn (:func:`tea.outputs.pdf.draw_in`)."""
        if self.size_pt is None:
            raise ValueError(f"chart {self.name!r}: only an outline made from a chart's description has a placeholder")
        w, h = self.size_pt
        return f'<svg xmlns="http://www.w3.org/2000/svg" width="{w}pt" height="{h}pt" viewBox="0 0 {w} {h}"/>'

    @cached_property  # a page is rendered at each density it is tried at: made once per chart
    def data_uri(self) -> str:
        """The SVG as a ``data:`` URL for the PDF engine, which draws it as an image: the same picture, laid
        out faster (:func:`for_engine`)."""
        return "data:image/svg+xml;base64," + base64.b64encode(for_engine(self.svg).encode("utf-8")).decode("ascii")

    @property
    def src(self) -> str:
        """Where the PDF engine takes the chart from: its ``data:`` URL, or for an outline its name under
        :data:`LATER`, which the engine asks for when it reaches the image (:func:`tea.outputs.pdf.layout`)."""
        return self.data_uri if self.svg else f"{LATER}:{self.name}"



_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(url\(#|href="#)([^)"]+)')
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9-]*")


def check_name(name: str) -> None:
    """Raise ValueError unless ``name`` can prefix the ids of a chart's SVG: letters, digits and ``-``."""
    if not _NAME.fullmatch(name):
        raise ValueError(f"chart name {name!r}: expected letters, digits and '-'")


def inline(text: str, name: str) -> str:
    """matplotlib's SVG file ``text`` as markup to sit inside an HTML page, every id prefixed with ``name``
    (letters, digits and ``-``, unique on the page)."""
    check_name(name)
    text = text[text.index("<svg"):]
    text = re.sub(r"\s*<metadata>.*?</metadata>", "", text, flags=re.S)
    text = _ID.sub(lambda m: f'id="{name}-{m.group(1)}"', text)
    text = _REF.sub(lambda m: f"{m.group(1)}{name}-{m.group(2)}", text)
    text = text.replace("<svg ", f'<svg class="chart" role="img" aria-labelledby="{name}-title" ', 1)
    return tidy(text).strip() + "\n"


def titled(svg: str, name: str, alt: str) -> str:
    """The inline SVG with ``alt`` as its accessible name (the ``<title>`` its root is labelled by), escaped
    as matplotlib escapes its own text."""
    title_xml = f'\n <title id="{name}-title">{xml_escape(alt)}</title>'
    return re.sub(r"(<svg[^>]*>)", lambda m: m.group(1) + title_xml, svg, count=1)


_GROUP = re.compile(r"<g(?:\s[^>]*?)?/?>|</g>")
_NAMED_ONLY = re.compile(r'<g(?:\s+id="[^"]*")?\s*/?>')
_NO_ROTATION = re.compile(r' transform="rotate\(-?0 [^)"]*\)"')


def tidy(svg: str) -> str:
    """matplotlib's SVG without what draws nothing: groups that only name their content (``<g id="...">``
    around each artist, and bare ``<g>``; their content stays, in order) and rotations by 0 degrees.

    The picture is the same; the PDF engine draws it in half the time (it
    sets up and restores the graphics state for every group, and reads
    every transform).

    >>> tidy('<svg><g id="a"><g><path d="M 0 0"/></g><g id="b"/></g>'
    ...      '<g clip-path="url(#c)"><text transform="rotate(-0 1 2)">1</text></g></svg>')
    '<svg><path d="M 0 0"/><g clip-path="url(#c)"><text>1</text></g></svg>'
    """
    kept: list[bool] = []

    def group(m: re.Match) -> str:
        tag = m.group(0)
        if tag == "</g>":
            return tag if kept.pop() else ""
        only_named = _NAMED_ONLY.fullmatch(tag) is not None
        if not tag.endswith("/>"):
            kept.append(not only_named)
        return "" if only_named else tag

    return _NO_ROTATION.sub("", _GROUP.sub(group, svg))


_SHEET = re.compile(r'\s*<defs>\s*<style type="text/css">\*\{(?P<rules>[^}<]*)\}</style>\s*</defs>')
_STYLED = re.compile(r'<(?P<tag>[a-zA-Z]+)(?P<attrs>[^>]*?) style="(?P<style>[^"]*)"')
_ATTR_NAME = re.compile(r'\s([a-zA-Z:-]+)="')


def _declarations(text: str) -> list[tuple[str, str]]:
    return [(n.strip(), v.strip()) for n, _, v in (d.partition(":") for d in text.split(";")) if n.strip()]


def for_engine(svg: str) -> str:
    """A chart's SVG as the PDF engine draws it fastest, with the same picture: each element's ``style``
    declarations as its presentation attributes (the engine parses a style attribute as CSS for every
    element it draws), and matplotlib's one style sheet (``*{stroke-linejoin: round; stroke-linecap: butt}``)
    as attributes of the root, which every element inherits unless it sets its own. An element that has an
    attribute of the same name as one of its declarations keeps its style attribute. The HTML page keeps
    matplotlib's markup.

    >>> for_engine('<svg x="1"><defs><style type="text/css">*{stroke-linecap: butt}</style></defs>'
    ...            '<path d="M 0 0" style="fill: none; stroke: #000"/></svg>')
    '<svg stroke-linecap="butt" x="1"><path d="M 0 0" fill="none" stroke="#000"/></svg>'
    """
    sheet = _SHEET.search(svg)
    if sheet is not None:
        root = "".join(f' {n}="{v}"' for n, v in _declarations(sheet["rules"]))
        svg = svg[:sheet.start()] + svg[sheet.end():]
        svg = svg.replace("<svg", "<svg" + root, 1)

    def attributes(m: re.Match) -> str:
        declared = _declarations(m["style"])
        if {n for n, _ in declared} & set(_ATTR_NAME.findall(m["attrs"])):
            return m.group(0)
        return f'<{m["tag"]}{m["attrs"]}' + "".join(f' {n}="{v}"' for n, v in declared)

    return _STYLED.sub(attributes, svg)
