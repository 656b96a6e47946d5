"""``python -m sweep.bench CASE...``: the child process of
:func:`sweep.bench.compile_times`; prints the seconds of each case's first call (JSON)."""

from __future__ import annotations

import json
import sys

from sweep.bench.end_to_end import first_calls

print(json.dumps(first_calls(sys.argv[1:])))
