"""Command line (layer: cli, the top): the ``symresp`` command.

Argument parsing and printing only; the work is done by the layers below. Run it as
``symresp COMMAND ...`` or ``python -m symresp.cli COMMAND ...``; see ``docs/command-line.md``.
"""

from ._main import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, build_parser, main

__all__ = ["main", "build_parser", "EXIT_OK", "EXIT_FAILURE", "EXIT_BAD_INPUT"]
