"""``python -m symresp.cli``: run the ``symresp`` command."""

from ._main import main

raise SystemExit(main())
