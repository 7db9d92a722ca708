"""Policies the review asks for and other apps provide (the review imports none of them).

The lighter review path (issue 10 item 2): whether a lodged revision may be endorsed without
the reviewer's step is decided by oversight (`hazards.oversight.changes.light_path`, the
change records and the site's tolerances), which provides it here when its app is ready
(`hazards.oversight.hooks.connect`). Without a provider every revision takes the full path.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Protocol


class LightPath(Protocol):
    def __call__(self, *, revision, content: dict, lock: bool = False,
                 using: str = "default") -> tuple[bool, str | None]: ...


def _full_path_only(*, revision, content: dict, lock: bool = False,
                    using: str = "default") -> tuple[bool, str | None]:
    return False, None


_light_path: LightPath = _full_path_only


def provide_light_path(policy: LightPath | Callable[..., tuple[bool, str | None]]) -> None:
    """Install the lighter-path policy (one provider; a second call replaces the first)."""
    global _light_path
    _light_path = policy


def light_path(*, revision, content: dict, lock: bool = False,
               using: str = "default") -> tuple[bool, str | None]:
    """(whether the site allows the lighter path, the reason to record or None): a reason
    means the approver may endorse the lodged `revision` without the reviewer's step."""
    return _light_path(revision=revision, content=content, lock=lock, using=using)
