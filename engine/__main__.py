"""``python -m engine ...``: the command line of :mod:`engine.cli`."""

from engine.cli import main

raise SystemExit(main())
