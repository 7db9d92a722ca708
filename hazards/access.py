"""Who may see and change what: the one place every page and endpoint asks.

Access to a process and everything under it comes from a role on that process
(`hazards.review.models.ProcessRole`: author, reviewer, approver, auditor). Reference data
(sites, solvents, vessels) are visible to every signed-in user and writable by administrators
or holders of the model's Django permission. Administrators (superusers and staff) see
everything; superusers may also change process data, but nobody signs without a role of
their own on the process, and service accounts never sign.

A model this module does not know is invisible to everyone but administrators (fail closed).
"""

from __future__ import annotations

from django.db.models import QuerySet
from rest_framework import permissions
from rest_framework.exceptions import ValidationError

# Path from a record to its process, per model label.
PROCESS_PATHS: dict[str, str] = {
    "hazards.process": "pk",
    "hazards.reactionstep": "process",
    "hazards.calorimetryrun": "step__process",
    "hazards.decompositiontest": "step__process",
    "hazards.decompositionpeak": "test__step__process",
    "hazards.calorimetryseries": "run__step__process",
    "hazards.indicatorsnapshot": "step__process",
    "hazards.measure": "step__process",
    "review.processrole": "process",
    "review.processrevision": "process",
    "review.finding": "process",
    "review.signature": "revision__process",
    "review.transition": "revision__process",
}
REFERENCE_MODELS = {"hazards.site", "hazards.solvent", "hazards.vessel"}
# Roles that may change a process's data.
EDITING_ROLES = ("author",)
REASON_REQUIRED = "A reason is required for a change to data under review or signed."
REASON_HEADER = "HTTP_X_CHANGE_REASON"


def _label(model) -> str:
    return model._meta.label_lower


def is_administrator(user) -> bool:
    return bool(getattr(user, "is_active", False)) and (user.is_superuser or user.is_staff)


def is_service_account(user) -> bool:
    """Accounts of other systems read and write data but can never sign."""
    from hazards.models import ServiceAccount

    return bool(getattr(user, "pk", None)) and ServiceAccount.objects.filter(user=user).exists()


def processes_of(user, roles: tuple[str, ...] | None = None) -> QuerySet:
    """Ids of the processes on which `user` holds any (or one of `roles`) role."""
    from hazards.review.models import ProcessRole

    qs = ProcessRole.objects.filter(user_id=user.pk)
    if roles is not None:
        qs = qs.filter(role__in=roles)
    return qs.values("process_id")


def visible(user, queryset: QuerySet) -> QuerySet:
    """The part of `queryset` that `user` may see."""
    if not getattr(user, "is_authenticated", False) or not getattr(user, "is_active", False):
        return queryset.none()
    if is_administrator(user):
        return queryset
    label = _label(queryset.model)
    if label in REFERENCE_MODELS:
        return queryset
    path = PROCESS_PATHS.get(label)
    if path is None:
        return queryset.none()
    return queryset.filter(**{f"{path}__in": processes_of(user)})


def process_id_of(obj) -> int | None:
    """The id of the process a record belongs to (None for reference data)."""
    path = PROCESS_PATHS.get(_label(type(obj)))
    if path is None:
        return None
    if path == "pk":
        return obj.pk
    target = obj
    for hop in path.split("__")[:-1]:
        target = getattr(target, hop)
    return getattr(target, f"{path.split('__')[-1]}_id")


def roles_on(user, process_id) -> set[str]:
    from hazards.review.models import ProcessRole

    if not getattr(user, "is_authenticated", False) or process_id is None:
        return set()
    return set(
        ProcessRole.objects.filter(user_id=user.pk, process_id=process_id).values_list(
            "role", flat=True
        )
    )


def can_edit_process(user, process_id) -> bool:
    """Authors of a process change its data; superusers may too (their edits are audited)."""
    if not getattr(user, "is_active", False):
        return False
    if user.is_superuser:
        return True
    return bool(roles_on(user, process_id) & set(EDITING_ROLES))


def under_review(process_id) -> bool:
    """True when the process's data have been signed by someone or were ever approved (so
    changes need a reason): a revision is lodged, checked or endorsed, or an earlier one
    carries an approval (the plant runs on approved data while changes collect in a draft)."""
    from hazards.review.models import SIGNED_STATES, Meaning, ProcessRevision, Signature

    return ProcessRevision.objects.filter(
        process_id=process_id, state__in=[s.value for s in SIGNED_STATES]
    ).exists() or Signature.objects.filter(
        revision__process_id=process_id, meaning=Meaning.APPROVED
    ).exists()


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
    from django.apps import apps

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
    import pghistory

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
