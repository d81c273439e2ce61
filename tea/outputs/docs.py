"""Generated reference text: the case-file keys and the JSON output keys, from the code's own tables.

``python -m tea.outputs.docs`` rewrites the parts of README.md between the ``<!-- begin:… -->``
and ``<!-- end:… -->`` markers; a test fails when the README is out of date.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

from tea.inputs import schema, units
from tea.model.ledger import LINES
from tea.model.results import FIGURES


def _default_text(k: schema.Key) -> str:
    if k.default is schema.REQUIRED:
        return "**required**"
    if k.default is schema.PRESET:
        return "preset"
    if k.default is schema.DERIVED:
        return "looked up"
    if k.default is None:
        return "not used"
    if isinstance(k.default, str):
        return f'"{k.default}"'
    if isinstance(k.default, bool):
        return "true" if k.default else "false"
    return f"{k.default:g}" if isinstance(k.default, float) else str(k.default)


def case_reference() -> str:
    """A markdown table per section of every case key."""
    out = []
    for section in schema.SECTIONS:
        out.append(f"**[{section}]**\n")
        out.append("| key (metric) | US customary spelling | unit | default | meaning and source |")
        out.append("|---|---|---|---|---|")
        for k in schema.keys_in(section):
            us = units.spell(k.template, "us_customary")
            us_text = "" if us == k.name else f"`{us}`"
            unit = k.unit_text("metric", "money")
            doc = k.doc
            if k.choices:
                doc += " One of: " + ", ".join(f"`{c}`" for c in k.choices) + "."
            if k.source:
                doc += f" Source: {k.source}."
            if k.aliases:
                doc += " Also accepted: " + ", ".join(f"`{units.spell(a)}`" for a in k.aliases) + "."
            out.append(f"| `{k.name}` | {us_text} | {unit} | {_default_text(k)} | {doc} |")
        out.append("")
    return "\n".join(out).rstrip() + "\n"


def json_reference() -> str:
    """Markdown lists of the decision figures and the ledger lines."""
    out = ["| figure | unit | scales with area | meaning |", "|---|---|---|---|"]
    for f in FIGURES:
        out.append(f"| `{f.name}` | {f.unit} | {'yes' if f.scales else 'no'} | {f.doc} |")
    out += ["", "| ledger line | unit | meaning |", "|---|---|---|"]
    for line in LINES:
        out.append(f"| `{line.name}` | {line.unit} | {line.doc} |")
    return "\n".join(out) + "\n"


BLOCKS = {"case-reference": case_reference, "json-reference": json_reference}


def update(text: str) -> str:
    """``text`` with every generated block replaced by its current content."""
    for name, make in BLOCKS.items():
        pattern = re.compile(rf"(<!-- begin:{name} -->\n).*?(<!-- end:{name} -->)", re.S)
        if not pattern.search(text):
            raise ValueError(f"README has no <!-- begin:{name} --> ... <!-- end:{name} --> block")
        text = pattern.sub(lambda m: m.group(1) + make() + m.group(2), text)
    return text


def main(argv: list[str] | None = None) -> int:
    import argparse

    parser = argparse.ArgumentParser(prog="python -m tea.outputs.docs",
                                     description="Regenerate the generated reference blocks of the README (the "
                                                 "case keys, the JSON figures and the ledger lines).")
    parser.add_argument("readme", nargs="?", type=Path, default=Path("README.md"),
                        help="the README to update in place (default: README.md here)")
    path = parser.parse_args(argv).readme
    try:
        text = update(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        print(f"error: {path}: {exc}", file=sys.stderr)
        return 2
    path.write_text(text, encoding="utf-8")
    print(f"updated {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
