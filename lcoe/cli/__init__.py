"""The command line: one module per command; the only place that prints, parses arguments
or picks an output folder.

May import: everything. Nothing imports it (but the ``lcoe`` entry point).
"""

from lcoe.cli.main import main

__all__ = ["main"]
