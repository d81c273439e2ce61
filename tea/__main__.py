"""``python -m tea``: the same as the ``tea`` command."""

import sys

from .cli import main

sys.exit(main())
