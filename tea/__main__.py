"""``python -m tea``: the same as the ``tea`` command."""

import sys

from tea.cli.main import main

sys.exit(main())
