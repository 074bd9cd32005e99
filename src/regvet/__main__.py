"""``python -m regvet`` is the same as the ``regvet`` command."""

import sys

from regvet.cli import main

sys.exit(main())
