"""``python -m audit`` runs the netdim command line."""

from .cli import main

raise SystemExit(main())
