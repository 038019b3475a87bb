"""``python -m anisotropy`` runs the command line."""

from anisotropy.cli import main

raise SystemExit(main())
