"""Identity and privilege changes in the audit trail (issue 18 item 2).

auth's models are not ours, so they are tracked through proxy models (django-pghistory's way
for third-party models): users (never the password hash, nor `last_login`, which every
sign-in changes), a separate event for each password change (who did it: the event's
context), groups, and the through tables of group membership and of user and group
permissions. Every event table is in the hash chain (hazards.review.audit).
"""

from __future__ import annotations

import pghistory
from django.contrib.auth.models import Group, User

# What an event of a user keeps: everything but the password hash and the last sign-in.
USER_UNTRACKED = ["password", "last_login"]


@pghistory.track(
    pghistory.UpdateEvent("password_change", condition=pghistory.AnyChange("password")),
    fields=["id"],
    obj_field=None,
    model_name="UserPasswordEvent",
)
@pghistory.track(
    pghistory.InsertEvent(),
    pghistory.UpdateEvent(),
    pghistory.DeleteEvent(),
    exclude=USER_UNTRACKED,
    model_name="UserEvent",
)
class TrackedUser(User):
    class Meta:
        proxy = True
        app_label = "hazards"


@pghistory.track(
    pghistory.InsertEvent(),
    pghistory.UpdateEvent(),
    pghistory.DeleteEvent(),
    model_name="GroupEvent",
)
class TrackedGroup(Group):
    class Meta:
        proxy = True
        app_label = "hazards"


@pghistory.track(
    pghistory.InsertEvent("group.add"),
    pghistory.DeleteEvent("group.remove"),
    obj_field=None,
    model_name="UserGroupEvent",
)
class TrackedUserGroups(User.groups.through):
    class Meta:
        proxy = True
        app_label = "hazards"


@pghistory.track(
    pghistory.InsertEvent("permission.add"),
    pghistory.DeleteEvent("permission.remove"),
    obj_field=None,
    model_name="UserPermissionEvent",
)
class TrackedUserPermissions(User.user_permissions.through):
    class Meta:
        proxy = True
        app_label = "hazards"


@pghistory.track(
    pghistory.InsertEvent("permission.add"),
    pghistory.DeleteEvent("permission.remove"),
    obj_field=None,
    model_name="GroupPermissionEvent",
)
class TrackedGroupPermissions(Group.permissions.through):
    class Meta:
        proxy = True
        app_label = "hazards"
