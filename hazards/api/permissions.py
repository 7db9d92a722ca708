"""The API's write permission: the role rules of `hazards.review.access` as a DRF permission,
and the change reason a write to signed data must give (body `reason` or X-Change-Reason)."""

from __future__ import annotations

import pghistory
from django.apps import apps
from rest_framework import permissions
from rest_framework.exceptions import ValidationError

from hazards.review.access import (
    PROCESS_PATHS,
    REASON_HEADER,
    REASON_REQUIRED,
    REFERENCE_MODELS,
    can_edit_process,
    is_administrator,
    process_id_of,
    under_review,
)


def _label(model) -> str:
    return model._meta.label_lower


def change_reason(request) -> str:
    data = getattr(request, "data", None)
    reason = ""
    if hasattr(data, "get"):
        reason = data.get("reason") or ""
    if not isinstance(reason, str):
        reason = ""
    return (reason or request.META.get(REASON_HEADER, "")).strip()


# Parent keys a new or moved record names in the request body, per model label.
_PARENT_FIELDS = {
    "hazards.reactionstep": ("process", "hazards.process"),
    "hazards.calorimetryrun": ("step", "hazards.reactionstep"),
    "hazards.decompositiontest": ("step", "hazards.reactionstep"),
    "hazards.decompositionpeak": ("test", "hazards.decompositiontest"),
    "hazards.calorimetryseries": ("run", "hazards.calorimetryrun"),
    "hazards.measure": ("step", "hazards.reactionstep"),
}


def _parent_process_id(label: str, request) -> tuple[bool, int | None]:
    """(named, process id) of the parent a request body points at."""
    spec = _PARENT_FIELDS.get(label)
    data = getattr(request, "data", None)
    if spec is None or not hasattr(data, "get") or data.get(spec[0]) in (None, ""):
        return False, None
    field, parent_label = spec
    parent_model = apps.get_model(parent_label)
    try:
        parent = parent_model._base_manager.filter(pk=int(data.get(field))).first()
    except (TypeError, ValueError):
        return True, None
    return True, (process_id_of(parent) if parent is not None else None)


def _require_reason_if_signed(request, process_id) -> None:
    reason = change_reason(request)
    if process_id is not None and not reason and under_review(process_id):
        raise ValidationError({"reason": [REASON_REQUIRED]})
    if reason:
        pghistory.context(reason=reason)


class ProcessRolePermission(permissions.BasePermission):
    """Object-level write checks for records that belong to a process, and reference data.

    Reading is governed by `visible()` in each viewset's `get_queryset` (other processes
    answer 404). Writing a process's records needs an editing role on that process; writing
    reference data needs administrator rights or the model permission. Changes to signed
    data need a reason (`reason` in the body or an `X-Change-Reason` header), which goes
    into the audit trail.
    """

    message = "You have no role on this process that allows this change."
    allows_every_read = True  # reads are limited by visible() (404), never refused

    def describe(self, view, method: str) -> str:
        if method in permissions.SAFE_METHODS:
            return "a role on the record's process (any role reads)"
        return ("the author role on the record's process (reference data: administrators); "
                "a `reason` (or `X-Change-Reason`) once the process has signed revisions")

    def has_permission(self, request, view):
        if request.method in permissions.SAFE_METHODS:
            return True
        user = request.user
        model = view.get_queryset().model
        label = _label(model)
        if label in REFERENCE_MODELS:
            opts = model._meta
            return is_administrator(user) or user.has_perm(
                f"{opts.app_label}.change_{opts.model_name}"
            ) or user.has_perm(f"{opts.app_label}.add_{opts.model_name}")
        if label not in PROCESS_PATHS:
            return is_administrator(user)
        named, process_id = _parent_process_id(label, request)
        if named:
            if process_id is None or not can_edit_process(user, process_id):
                return False
            _require_reason_if_signed(request, process_id)
        return True

    def has_object_permission(self, request, view, obj):
        if request.method in permissions.SAFE_METHODS:
            return True
        label = _label(type(obj))
        if label in REFERENCE_MODELS:
            return True  # checked in has_permission
        process_id = process_id_of(obj)
        if process_id is None or not can_edit_process(request.user, process_id):
            return False
        _require_reason_if_signed(request, process_id)
        return True
