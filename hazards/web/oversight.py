"""Pages of oversight: revalidation due and overdue, change records, the inbox and the
notification preferences."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.shortcuts import get_object_or_404, redirect, render

from hazards.oversight import readable, revalidation, services
from hazards.oversight.dates import RETENTION_NOTE
from hazards.oversight.models import ChangeRecord, Kind
from hazards.review.access import is_administrator, processes_of

WINDOWS = (30, 90, 180, 365)


def chosen_window(request) -> int:
    try:
        days = int(request.GET.get("within", revalidation.DEFAULT_WINDOW_DAYS))
    except ValueError:
        days = revalidation.DEFAULT_WINDOW_DAYS
    return min(max(days, 0), 3660)


@login_required
def revalidation_page(request):
    data = revalidation.due_and_overdue(request.user, within_days=chosen_window(request))
    return render(request, "oversight/revalidation.html", {
        **data, "windows": WINDOWS, "retention": RETENTION_NOTE})


def _changes(user):
    qs = ChangeRecord.objects.select_related("process", "opened_by", "approved_revision",
                                             "closed_by_revision")
    return qs if is_administrator(user) else qs.filter(process__in=processes_of(user))


@login_required
def change_list(request):
    qs = _changes(request.user).order_by("state", "-opened_at", "-id")
    process = request.GET.get("process")
    if process and process.isdigit():
        qs = qs.filter(process_id=int(process))
    if request.GET.get("state") in ("open", "closed"):
        qs = qs.filter(state=request.GET["state"])
    return render(request, "oversight/change_list.html", {"records": qs[:200]})


@login_required
def change_detail(request, pk):
    record = get_object_or_404(_changes(request.user).select_related("opened_by"), pk=pk)
    entries = [{"at": e.at, "who": readable.person(e.user), "url": e.url, "reason": e.reason,
                "back_to_approved": e.back_to_approved, "changes": readable.rows(e.changes)}
               for e in record.entries.select_related("user").order_by("at", "id")]
    return render(request, "oversight/change_detail.html", {
        "record": record, "entries": entries, "opened_by": readable.person(record.opened_by),
        "inputs": readable.rows(record.changes),
        "moved": readable.indicator_rows(record.indicators)})


@login_required
def inbox(request):
    if request.method == "POST":
        ids = request.POST.getlist("id")
        services.notifications_mark_read(
            user=request.user, ids=[int(i) for i in ids if i.isdigit()] if ids else None)
        return redirect("/notifications/")
    rows = services.inbox_of(request.user).select_related("process").order_by(
        "-created_at", "-id")[:200]
    return render(request, "oversight/inbox.html", {"rows": rows})


@login_required
def preferences_page(request):
    saved = False
    if request.method == "POST":
        for kind in Kind.values:
            services.preference_set(user=request.user, kind=kind,
                                    email=request.POST.get(f"{kind}-email") == "on",
                                    inbox=request.POST.get(f"{kind}-inbox") == "on")
        saved = True
    return render(request, "oversight/preferences.html", {
        "rows": services.preferences_of(request.user), "saved": saved})

