"""`tea`: stand-life economics and carbon accounting for perennial energy crops.

>>> import tea
>>> case = tea.load_case("cases/clay_corner_miscanthus.toml")
>>> ledger = tea.build_ledger(case)
>>> res = tea.summarise(case, ledger)
>>> sorted(res.to_dict())[:3]
['area_ha', 'case', 'case_hash']
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("tea")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.1.0+src"

from tea.core.errors import CaseError, OutputError, Problem, TeaError  # noqa: E402
from tea.inputs.case import Case, load_case, load_text, load_mapping, preset_names, load_preset  # noqa: E402
from tea.model.ledger import build_ledger  # noqa: E402
from tea.model.results import Results, summarise  # noqa: E402


def write_workbook(case, ledger, results, path, **options):
    """Write the live-formula workbook of a case (see :mod:`tea.outputs.workbook`)."""
    from tea.outputs.workbook import write_workbook as _write

    return _write(case, ledger, results, path, **options)


def render_summary(case, ledger, results, path, **options):
    """Render the printed summary of a case as PDF or HTML (see :mod:`tea.outputs.report`)."""
    from tea.outputs.report import render_summary as _render

    return _render(case, ledger, results, path, **options)


__all__ = [
    "Case", "CaseError", "OutputError", "Problem", "Results", "TeaError", "__version__",
    "build_ledger", "load_case", "load_mapping", "load_preset", "load_text", "preset_names",
    "render_summary", "summarise", "write_workbook",
]
