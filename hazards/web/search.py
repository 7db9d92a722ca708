"""One search across the records a person may see (issue 21): processes, steps, findings and
vessels, each group bounded, nothing shown that `hazards.review.access.visible` hides.

Case-insensitive substring matching (`icontains`, PostgreSQL ILIKE) on short text columns:
at the sizes a site keeps (thousands of rows per kind) a scan bounded by LIMIT is fast, and
it needs no database extension; a trigram index (pg_trgm) is the way up if that changes.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from django.contrib.auth.decorators import login_required
from django.db.models import Q
from django.shortcuts import render

from hazards.models import Process, ReactionStep, Vessel
from hazards.review.access import visible
from hazards.review.models import Finding

MIN_LENGTH = 2
MAX_LENGTH = 100
PER_GROUP = 10
EMPTY_QUERY = "Type a word to search processes, steps, findings and vessels."
TOO_SHORT = f"Type at least {MIN_LENGTH} characters to search."


@dataclass
class Group:
    key: str
    title: str
    hits: list[dict] = field(default_factory=list)
    total: int = 0

    @property
    def more(self) -> int:
        return self.total - len(self.hits)


def _any(text: str, *fields: str) -> Q:
    condition = Q()
    for name in fields:
        condition |= Q(**{f"{name}__icontains": text})
    return condition


def _bounded(queryset) -> tuple[list, int]:
    """The first PER_GROUP rows, and the total (counted only when there are more)."""
    rows = list(queryset[: PER_GROUP + 1])
    if len(rows) <= PER_GROUP:
        return rows, len(rows)
    return rows[:PER_GROUP], queryset.count()


def search_all(user, text: str) -> list[Group]:
    """Each kind's matches among what `user` may see: at most 8 queries, whatever is found."""
    processes, n_processes = _bounded(
        visible(user, Process.objects.select_related("site"))
        .filter(_any(text, "name", "site__code", "site__name")).order_by("name", "pk"))
    steps, n_steps = _bounded(
        visible(user, ReactionStep.objects.select_related("process"))
        .filter(_any(text, "name")).order_by("process__name", "sequence", "pk"))
    findings, n_findings = _bounded(
        visible(user, Finding.objects.select_related("process"))
        .filter(_any(text, "title", "description")).order_by("-created_at", "-pk"))
    vessels, n_vessels = _bounded(
        visible(user, Vessel.objects.all()).filter(_any(text, "name", "tag")).order_by("tag"))
    return [
        Group("processes", "Processes", [
            {"url": f"/processes/{p.pk}/", "text": p.name, "detail": f"site {p.site.code}"}
            for p in processes], n_processes),
        Group("steps", "Steps", [
            {"url": f"/steps/{s.pk}/", "text": s.name, "detail": f"in {s.process.name}"}
            for s in steps], n_steps),
        Group("findings", "Findings", [
            {"url": f"/findings/{f.pk}/", "text": f.title,
             "detail": f"{f.get_status_display()}, {f.process.name}"}
            for f in findings], n_findings),
        Group("vessels", "Vessels", [
            {"url": f"/vessels/#vessel-{v.pk}", "text": f"{v.tag} {v.name}", "detail": ""}
            for v in vessels], n_vessels),
    ]


@login_required
def page(request):
    text = " ".join(request.GET.get("q", "").split())[:MAX_LENGTH]
    message, groups = None, []
    if not text:
        message = EMPTY_QUERY
    elif len(text) < MIN_LENGTH:
        message = TOO_SHORT
    else:
        groups = search_all(request.user, text)
    return render(request, "hazards/search.html", {
        "q": text, "message": message, "groups": groups, "per_group": PER_GROUP,
        "found": sum(g.total for g in groups)})
