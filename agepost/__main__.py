"""Allow ``python -m agepost``."""

from agepost.cli import main

raise SystemExit(main())
