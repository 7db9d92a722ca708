"""The review's personas serve the measures' tests too."""

from tests.review.conftest import approver, as_user, auditor, author, process, reviewer  # noqa: F401
