"""What every page view shares: who may see and change what, and the reason for a change."""

from __future__ import annotations

from contextlib import contextmanager

from django.core.exceptions import PermissionDenied
from django.shortcuts import get_object_or_404

from hazards import trail
from hazards.models import Process, ReactionStep
from hazards.review import access

NOT_YOURS = "You hold no role on this process that allows this change."
REFERENCE_ONLY_ADMINS = "Only administrators (or holders of the permission) change reference data."


def visible_or_404(user, queryset, **lookup):
    """The record if `user` may see it; a 404 otherwise (other processes do not exist)."""
    return get_object_or_404(access.visible(user, queryset), **lookup)


def process_of(obj) -> Process | None:
    pid = access.process_id_of(obj)
    return None if pid is None else Process.objects.get(pk=pid)


def can_edit(user, obj_or_model, process_id=None) -> bool:
    """May `user` change this record (or add one of this model under `process_id`)?"""
    model = obj_or_model if isinstance(obj_or_model, type) else type(obj_or_model)
    label = model._meta.label_lower
    if label in access.REFERENCE_MODELS:
        opts = model._meta
        return access.is_administrator(user) or user.has_perm(
            f"{opts.app_label}.change_{opts.model_name}") or user.has_perm(
            f"{opts.app_label}.add_{opts.model_name}")
    if label == "hazards.process" and process_id is None and isinstance(obj_or_model, type):
        return access.is_administrator(user)
    if process_id is None and not isinstance(obj_or_model, type):
        process_id = access.process_id_of(obj_or_model)
    return access.can_edit_process(user, process_id)


def require_edit(user, obj_or_model, process_id=None) -> None:
    if not can_edit(user, obj_or_model, process_id):
        model = obj_or_model if isinstance(obj_or_model, type) else type(obj_or_model)
        if model._meta.label_lower in access.REFERENCE_MODELS:
            raise PermissionDenied(REFERENCE_ONLY_ADMINS)
        raise PermissionDenied(NOT_YOURS)


def needs_reason(process_id) -> bool:
    """Changes to data that someone has signed must say why (access.REASON_REQUIRED)."""
    return process_id is not None and access.under_review(process_id)


def reference_needs_reason(obj) -> bool:
    """A vessel or solvent used by a step whose process is under review."""
    if obj is None or obj.pk is None:
        return False
    field = obj._meta.model_name
    pids = ReactionStep.objects.filter(**{field: obj.pk}).values_list("process_id", flat=True)
    return any(access.under_review(pid) for pid in set(pids))


@contextmanager
def audit_reason(reason: str):
    """Put the reason of a change into the audit trail's context (pghistory)."""
    if reason:
        with trail.scope(reason=reason):
            yield
    else:
        yield
