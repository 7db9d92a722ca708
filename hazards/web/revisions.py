"""Every revision of a process, and a comparison of any two: a summary of what moved in
each step's class and indicators first, then the field changes grouped by record."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.shortcuts import render

from hazards.models import Process
from hazards.review.models import ProcessRevision
from hazards.review.selectors import content_diff
from hazards.review.services import revisions as rev
from hazards.web.common import visible_or_404
from hazards.web.diff import grouped, humanise_diff, record_names, revision_summary

NOT_A_REVISION = "Revision {value} is not a revision of this process (it has {numbers})."
SAME_REVISION = "Choose two different revisions to compare."


def _number(raw: str | None):
    return int(raw) if raw and raw.isdigit() else None


@login_required
def compare(request, pk):
    process = visible_or_404(request.user, Process.objects.select_related("site"), pk=pk)
    rev.current_revision(process)  # an open draft holds the live content once reconciled
    revisions = list(
        ProcessRevision.objects.filter(process=process)
        .select_related("created_by")
        .order_by("-number")
    )
    by_number = {r.number: r for r in revisions}
    numbers = ", ".join(str(n) for n in sorted(by_number)) or "none"
    context = {
        "process": process,
        "revisions": revisions,
        "older": None,
        "newer": None,
        "errors": {},
    }
    if len(revisions) < 2:
        return render(request, "hazards/revision_compare.html", context)
    default_new, default_old = revisions[0].number, revisions[1].number
    picked = {}
    for name, default in (("from", default_old), ("to", default_new)):
        raw = request.GET.get(name)
        value = _number(raw) if raw else default
        if value not in by_number:
            context["errors"][name] = NOT_A_REVISION.format(value=raw, numbers=numbers)
        picked[name] = value
    if not context["errors"] and picked["from"] == picked["to"]:
        context["errors"]["to"] = SAME_REVISION
    context["picked"] = picked
    if context["errors"]:
        return render(request, "hazards/revision_compare.html", context, status=400)
    older, newer = sorted(
        (by_number[picked["from"]], by_number[picked["to"]]), key=lambda r: r.number
    )
    names = record_names(older.content, newer.content)
    changes = humanise_diff(content_diff(older.content, newer.content), names)
    context.update(
        {
            "older": older,
            "newer": newer,
            "summary": revision_summary(older.content, newer.content),
            "groups": grouped(changes),
            "change_count": len(changes),
        }
    )
    return render(request, "hazards/revision_compare.html", context)
