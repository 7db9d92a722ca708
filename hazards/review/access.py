"""Who may see and change what: the one place every page and endpoint asks.

Access to a process and everything under it comes from a role on that process
(`hazards.review.models.ProcessRole`: author, reviewer, approver, auditor). Reference data
(sites, solvents, vessels) are visible to every signed-in user and writable by administrators
or holders of the model's Django permission. Administrators (superusers and staff) see
everything; superusers may also change process data, but nobody signs without a role of
their own on the process, and service accounts never sign.

A model this module does not know is invisible to everyone but administrators (fail closed).
The API's permission class built on these rules is `hazards.api.permissions`.
"""

from __future__ import annotations

from django.db.models import QuerySet

from hazards.models import ServiceAccount
from hazards.review.models import SIGNED_STATES, Meaning, ProcessRevision, ProcessRole, Signature

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
    return bool(getattr(user, "pk", None)) and ServiceAccount.objects.filter(user=user).exists()


def processes_of(user, roles: tuple[str, ...] | None = None) -> QuerySet:
    """Ids of the processes on which `user` holds any (or one of `roles`) role."""
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
    return ProcessRevision.objects.filter(
        process_id=process_id, state__in=[s.value for s in SIGNED_STATES]
    ).exists() or Signature.objects.filter(
        revision__process_id=process_id, meaning=Meaning.APPROVED
    ).exists()
