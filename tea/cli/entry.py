"""The `tea` command's entry point: an interrupt while the libraries load ends the run quietly too."""

from __future__ import annotations

import sys


def main() -> int:
    """Load the command line and run it; Ctrl-C at any point (loading the libraries, building the options)
    exits 130 with one line, as an interrupt during the work does."""
    try:
        from tea.cli.main import main as run

        return run()
    except KeyboardInterrupt:
        print("interrupted; no output file was left half-written", file=sys.stderr)
        return 130
