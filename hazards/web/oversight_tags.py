"""Template helpers other pages use to show oversight state (the `oversight` library,
registered in settings.TEMPLATES):

    {% load oversight %}
    {% revalidation_flag process %}          the overdue / due / open-change banner
    {% oversight_start_panel %}              the start page's due-and-overdue panel
    {% overdue_process_ids as overdue %}     ids of overdue processes (one query), for lists
    {% unread_notifications as unread %}     the signed-in person's unread count
"""

from __future__ import annotations

from django import template

from hazards.oversight import revalidation
from hazards.oversight.dates import OVERDUE, due_state
from hazards.oversight.services import inbox_of
from hazards.web.oversight import WINDOWS, chosen_window

register = template.Library()


@register.inclusion_tag("oversight/_flag.html")
def revalidation_flag(process, compact=False):
    return {"flag": revalidation.process_flag(process), "process": process, "compact": compact}


@register.inclusion_tag("oversight/_start_panel.html", takes_context=True)
def oversight_start_panel(context):
    request = context["request"]
    data = revalidation.due_and_overdue(request.user, within_days=chosen_window(request))
    return {**data, "windows": WINDOWS}


@register.simple_tag(takes_context=True)
def overdue_process_ids(context) -> set[int]:
    user = context["request"].user
    on = revalidation.today()
    return {s.process_id for s in revalidation.active_schedules(user).filter(due_on__lt=on)
            if due_state(s.due_on, on, 0) == OVERDUE}


@register.simple_tag(takes_context=True)
def unread_notifications(context) -> int:
    user = context["request"].user
    if not getattr(user, "is_authenticated", False):
        return 0
    return inbox_of(user).filter(read_at__isnull=True).count()
