"""``python -m netcheck``: the command-line interface."""

from .cli.main import main

raise SystemExit(main())
