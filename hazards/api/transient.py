"""Which database errors a request may be run again after (deadlock, serialization failure):
the error handlers mark the request, `hazards.middleware.RetryTransientDatabaseErrors` runs it
again."""

from __future__ import annotations

# PostgreSQL aborts one transaction of a deadlock (40P01) or of a serialization conflict
# (40001) and rolls it back whole; the usual remedy is to run it again. Found by the load
# test: an API create that had taken the audit chain's advisory lock, checking its foreign
# key at COMMIT, against a page read that had locked the process tree and wanted that lock.
TRANSIENT_SQLSTATES = frozenset({"40P01", "40001"})
RETRY_ATTEMPTS = 3


def transient_database_error(exc: BaseException | None) -> bool:
    """A deadlock or serialization failure anywhere down the exception's chain."""
    seen = 0
    while exc is not None and seen < 10:
        if getattr(exc, "sqlstate", None) in TRANSIENT_SQLSTATES:
            return True
        exc, seen = exc.__cause__ or exc.__context__, seen + 1
    return False


def mark_transient(request, exc: BaseException) -> bool:
    """Called by the error handlers: whether the request may be run again from the start
    (then marked so for RetryTransientDatabaseErrors)."""
    transient = transient_database_error(exc)
    if transient:
        getattr(request, "_request", request)._exo_transient_db_error = True
    return transient
