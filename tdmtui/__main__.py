"""`python -m tdmtui`."""

from tdmtui.cli import main

raise SystemExit(main())
