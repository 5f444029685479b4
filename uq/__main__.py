"""``python -m plyrisk``: the command line."""

from plyrisk.cli import main

raise SystemExit(main())
