"""``python -m rheology`` runs the command-line interface."""

from rheology.cli import main

raise SystemExit(main())
