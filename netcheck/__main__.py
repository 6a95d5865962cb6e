"""``python -m netcheck``: the command-line interface."""

from .cli import main

raise SystemExit(main())
