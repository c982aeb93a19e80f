"""``python -m caselint``: the same as the ``caselint`` command."""

from caselint.cli import main

raise SystemExit(main())
