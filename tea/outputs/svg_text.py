"""Chart text laid out by the PDF engine a line at a time, not a letter at a time.

The PDF engine (WeasyPrint) draws an SVG ``<text>`` element letter by
letter: each letter is laid out on its own (a text layout of one character)
so that per-letter positions (``x``/``y``/``dx``/``dy``/``rotate`` lists,
``letter-spacing``, ``textLength``) can be honoured. matplotlib's SVG writer,
with text kept as text (:data:`tea.outputs.charts.STYLE`), gives each label
as one ``<text>`` with one ``x`` and one ``y`` and none of those: its letters
sit where the line's own layout puts them. For such an element,
:func:`install` has the engine lay the line out once and draw it as one
line, which is most of the time a page's charts take to draw (about 4 ms a
label against 0.3 ms, measured on the demo pages). Any other text element
(several positions, spacing, a length to fit, child ``<tspan>``, a line or
paragraph separator, right-to-left text) is drawn as the engine draws it.

A line laid out whole is kerned as the font says, where letter by letter it
is not, so a label can come out a fraction of a point narrower; it is then
closer to what the chart library measured when it placed it.
"""

from __future__ import annotations

import unicodedata
from functools import lru_cache
from math import inf

#: attributes that give a text element per-letter placement (drawn letter by letter, as the engine does)
_PER_LETTER = ("dx", "dy", "rotate", "letter-spacing", "textLength")

#: Unicode bidirectional classes of right-to-left letters and digits
_RIGHT_TO_LEFT = frozenset({"R", "AL", "AN"})

#: whether one-position text is drawn a line at a time once :func:`install` has run (False: as the engine
#: draws it, letter by letter; for comparing the two)
LINE_AT_A_TIME = True

_installed = False


def _one_position(node) -> bool:
    """Whether a text element is one left-to-right run of text at one point, with no per-letter placement
    and no children."""
    attrib = node.attrib
    if any(a in attrib for a in _PER_LETTER) or next(iter(node), None) is not None:
        return False
    if node.get("direction") == "rtl" or any(unicodedata.bidirectional(c) in _RIGHT_TO_LEFT for c in node.text):
        return False  # set letter by letter in the order typed, as the engine does
    normalize = _pieces()[7]
    return all(len(normalize(attrib.get(a, "")).split()) <= 1 for a in ("x", "y"))  # as the engine splits them


def install() -> bool:
    """Have the PDF engine draw one-position text elements a line at a time (once per process); whether it
    does. It does not where the engine lacks the pieces its own drawing of text is made of (another
    version of it): text is then drawn as the engine draws it."""
    global _installed
    if _installed:
        return True
    import importlib
    import inspect

    try:
        engine_svg = importlib.import_module("weasyprint.svg")
        engine_text = importlib.import_module("weasyprint.svg.text")
        letter_by_letter = engine_text.text
        _pieces()
        if list(inspect.signature(letter_by_letter).parameters) != ["svg", "node", "font_size"]:
            return False
    except (ImportError, AttributeError, ValueError, TypeError):
        return False

    def text(svg, node, font_size):
        if not LINE_AT_A_TIME or node.tag != "text" or not node.text or not _one_position(node) \
                or not _line(svg, node, font_size):
            return letter_by_letter(svg, node, font_size)
        return None

    for tag, drawer in list(engine_svg.TAGS.items()):
        if drawer is letter_by_letter:
            engine_svg.TAGS[tag] = text
    engine_svg.text = text  # the engine tells text elements by this function (text-anchor, bounding boxes)
    _installed = True
    return True


@lru_cache(maxsize=1)
def _pieces():
    """The engine's pieces :func:`_line` is made of (an ImportError or AttributeError where one is missing)."""
    from weasyprint.css.properties import INITIAL_VALUES
    from weasyprint.draw.text import draw_emojis, draw_first_line
    from weasyprint.matrix import Matrix
    from weasyprint.svg.bounding_box import extend_bounding_box
    from weasyprint.svg.text import Style, TextBox
    from weasyprint.svg.utils import normalize, size
    from weasyprint.text.line_break import split_first_line

    return (INITIAL_VALUES, draw_emojis, draw_first_line, Matrix, extend_bounding_box, Style, TextBox, normalize,
            size, split_first_line)


def _line(svg, node, font_size) -> bool:
    """Draw a one-position text element as one laid-out line: what the engine's letter-by-letter drawing
    does, with the line laid out once (:func:`weasyprint.svg.text.text`, whose steps this follows); False,
    and nothing drawn, where the text does not lay out as one line (a line or paragraph separator in it)."""
    (INITIAL_VALUES, draw_emojis, draw_first_line, Matrix, extend_bounding_box, Style, TextBox, normalize, size,
     split_first_line) = _pieces()

    style = Style()
    style.update(INITIAL_VALUES)
    style.font_config = svg.font_config
    style["font_family"] = [font.strip("\"'") for font in node.get("font-family", "sans-serif").split(",")]
    style["font_style"] = node.get("font-style", "normal")
    weight = node.get("font-weight", 400)
    if weight == "normal":
        weight = 400
    elif weight == "bold":
        weight = 700
    else:
        try:
            weight = int(weight)
        except ValueError:
            weight = 400
    style["font_weight"] = weight
    style["font_size"] = font_size
    if node.get("direction") in ("ltr", "rtl"):
        style["direction"] = node.get("direction")

    layout, _, resume_at, width, height, baseline = split_first_line(node.text, style, svg.context, inf, 0)
    if resume_at is not None:
        return False
    x = size(normalize(node.attrib["x"]).strip(), font_size, svg.inner_width) if "x" in node.attrib else None
    y = size(normalize(node.attrib["y"]).strip(), font_size, svg.inner_height) if "y" in node.attrib else None
    if x is not None:
        svg.cursor_d_position[0] = 0
    if y is not None:
        svg.cursor_d_position[1] = 0
    x = svg.cursor_position[0] if x is None else x
    y = svg.cursor_position[1] if y is None else y

    ascent, descent = font_size * .8, font_size * .2
    y_align = 0
    display_anchor = node.get("display-anchor")
    alignment_baseline = node.get("dominant-baseline", node.get("alignment-baseline"))
    if display_anchor == "middle":
        y_align = -height / 2
    elif display_anchor == "top":
        pass
    elif display_anchor == "bottom":
        y_align = -height
    elif alignment_baseline in ("central", "middle"):
        y_align = (ascent + descent) / 2 - descent
    elif alignment_baseline in ("text-before-edge", "before_edge", "top", "hanging", "text-top"):
        y_align = ascent
    elif alignment_baseline in ("text-after-edge", "after_edge", "bottom", "text-bottom"):
        y_align = -descent

    svg.cursor_position = x + width, y
    x_position = x + svg.cursor_d_position[0]
    y_position = y + svg.cursor_d_position[1] + y_align
    points = ((x_position, y_position - baseline), (x_position + width, y_position - baseline + height))
    node.text_bounding_box = extend_bounding_box(node.text_bounding_box, points)

    svg.stream.push_state()
    fill, stroke = svg.set_graphical_state(node, font_size)
    svg.stream.begin_text()
    layout.reactivate(style)
    svg.fill_stroke(fill, stroke, text=True)
    matrix = Matrix(a=1, d=-1, e=x_position, f=y_position)
    text_box = TextBox(layout, style)
    text_box.baseline = baseline
    emojis = draw_first_line(svg.stream, text_box, "none", "none", matrix)
    svg.stream.end_text()
    svg.stream.pop_state()
    draw_emojis(svg.stream, style, x, y, emojis)
    return True
