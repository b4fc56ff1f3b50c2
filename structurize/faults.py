"""Test-only fault injection: kill this process at a named point.

Active only when ``STRUCTURIZE_FAULT_INJECTION=1``.  ``STRUCTURIZE_FAULT_POINT=<name>:<n>``
sends SIGKILL to the process the n-th time it reaches point ``name`` (1-based).  Points:
``after_result_before_begin`` (a worker's result is in, its transaction not begun),
``after_document_before_values``, ``after_values_before_status`` (inside the transaction),
``before_commit``, ``after_commit_before_progress``, ``before_output_rename`` and
``after_output_rename`` (before the folder is synced).
"""

from __future__ import annotations

import os
import signal

_counts: dict[str, int] = {}


def fault_point(name: str) -> None:
    if os.environ.get("STRUCTURIZE_FAULT_INJECTION") != "1":
        return
    target, _, nth = os.environ.get("STRUCTURIZE_FAULT_POINT", "").partition(":")
    if target != name:
        return
    _counts[name] = _counts.get(name, 0) + 1
    if _counts[name] == int(nth or 1):
        os.kill(os.getpid(), signal.SIGKILL)
