"""The audit trail's context (who, from where, why) for one piece of work.

pghistory keeps one context per request: a nested `pghistory.context(reason=…)` only updates
that context's metadata, and the database row of the context is rewritten with the latest
metadata on every statement. Work done later in the same request under another reason (the
review layer reconciling revisions after the commit, say) would therefore overwrite the
reason of every change made earlier in the request. `scope` gives such work a context of its
own, which inherits the request's user and URL and leaves the outer context untouched.
"""

from __future__ import annotations

import uuid
from contextlib import contextmanager

import pghistory
from pghistory import runtime


@contextmanager
def scope(**metadata):
    """Record the changes made inside under their own context (outer metadata + `metadata`)."""
    outer = getattr(runtime._tracker, "value", None)
    if outer is None:
        with pghistory.context(**metadata):
            yield
        return
    runtime._tracker.value = runtime.Context(
        id=uuid.uuid4(), metadata={**outer.metadata, **metadata}
    )
    try:
        yield
    finally:
        runtime._tracker.value = outer


def current_metadata() -> dict:
    """The metadata the next change would be recorded with ({} outside any context)."""
    tracker = getattr(runtime._tracker, "value", None)
    return dict(tracker.metadata) if tracker is not None else {}
