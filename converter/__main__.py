"""``python -m converter`` runs the pertbook command line."""

from converter.cli import main

raise SystemExit(main())
