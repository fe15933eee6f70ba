"""``python -m optimizer``: the same as the ``corepace`` command."""

from optimizer.cli import main

raise SystemExit(main())
