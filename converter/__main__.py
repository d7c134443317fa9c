"""``python -m converter`` runs the pertbook command line."""

from .cli import main

raise SystemExit(main())
