"""Run the command line as ``python -m profiles``."""

from .cli import main

raise SystemExit(main())
