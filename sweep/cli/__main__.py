"""``python -m sweep.cli``: the ``sweep`` command."""

from __future__ import annotations

import sys

from sweep.cli import main

sys.exit(main())
