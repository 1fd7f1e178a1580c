"""``python -m symresp``: the command line, the same as the ``symresp`` script."""

from .cli import main

raise SystemExit(main())
