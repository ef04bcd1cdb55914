"""``python -m faciesseq`` runs the command line."""

from faciesseq.cli import main

raise SystemExit(main())
