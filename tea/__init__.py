"""`tea`: stand-life economics and carbon accounting for perennial energy crops.

>>> import tea
>>> case = tea.load_case("cases/clay_corner_miscanthus.toml")
>>> ledger = tea.build_ledger(case)
>>> res = tea.summarise(case, ledger)
>>> sorted(res.to_dict())[:3]
['area_ha', 'case', 'case_hash']
"""

from __future__ import annotations


#: the release; the package's metadata takes it from here (pyproject.toml), so that reading it costs no
#: look-up of the installed distributions (about 50 ms of every command's start)
__version__ = "0.1.0"

#: the public names imported when first used (``import tea`` itself stays light, so that the command line
#: can answer an interrupt, or ``--help``, before the numerical libraries are loaded: its first lines wait
#: for an interrupt a few milliseconds after the interpreter has started, see :mod:`tea.cli.entry`)
_LAZY = {"CaseError": "tea.core.errors", "OutputError": "tea.core.errors", "Problem": "tea.core.errors",
         "TeaError": "tea.core.errors", "Case": "tea.inputs.case", "load_case": "tea.inputs.case", "load_text": "tea.inputs.case",
         "load_mapping": "tea.inputs.case", "preset_names": "tea.inputs.case", "load_preset": "tea.inputs.case",
         "build_ledger": "tea.model.ledger", "Results": "tea.model.results", "summarise": "tea.model.results"}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'tea' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_LAZY) | {"__version__"})


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
