"""``python -m tea``: the same as the ``tea`` command."""

import sys

from tea.cli.entry import main

sys.exit(main())
