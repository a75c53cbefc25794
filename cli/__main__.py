"""``python -m streakwise.cli``."""

from .main import main

raise SystemExit(main())
