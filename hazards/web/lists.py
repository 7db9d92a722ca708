"""Lists of processes and steps: filters, sorting and pagination that live in the URL."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.db.models import F
from django.shortcuts import render

from hazards.models import Site
from hazards.models.process import OperationMode
from hazards.review.models import ReviewState
from hazards.web import selectors
from hazards.web.display import CLASS_TEXT, STATE_TEXT
from hazards.web.paging import keyset_page

PAGE_SIZE = 20

PROCESS_SORTS = {
    "name": ("Name", [F("name").asc()]),
    "-name": ("Name, Z to A", [F("name").desc()]),
    "site": ("Site", [F("site__code").asc(), F("name").asc()]),
    # The name as the state's row keeps it: one index of (state, name, process) gives the order.
    "state": ("Review state", [F("review_state").asc(nulls_first=True),
                               F("list_state__name").asc()]),
    "-updated": ("Recently changed", [F("updated_at").desc()]),
}
STEP_SORTS = {
    "process": ("Process, then sequence", [F("process__name").asc(), F("sequence").asc()]),
    # By class, then in the order the steps were entered: one index of the current
    # snapshots gives that order (a tie-break by process name would sort every step).
    "-klass": ("Class, highest first", [F("klass").desc(nulls_last=True), F("pk").desc()]),
    "klass": ("Class, lowest first (unassigned first)", [F("klass").asc(nulls_first=True),
                                                         F("pk").asc()]),
    "name": ("Step name", [F("name").asc()]),
    "-updated": ("Recently changed", [F("updated_at").desc()]),
}


def _page(request, queryset):
    return keyset_page(request, queryset, PAGE_SIZE)


def _choice(value, allowed, default=""):
    return value if value in allowed else default


@login_required
def process_list(request):
    g = request.GET
    qs = selectors.processes_with_state(request.user)
    filters = {
        "q": g.get("q", "").strip()[:100],
        "site": _choice(g.get("site", ""), set(Site.objects.values_list("code", flat=True))),
        "state": _choice(g.get("state", ""), {*ReviewState.values, "none"}),
        "sort": _choice(g.get("sort", ""), PROCESS_SORTS, "name"),
    }
    qs = selectors.search(qs, filters["q"], "name", "description")
    if filters["site"]:
        qs = qs.filter(site__code=filters["site"])
    if filters["state"] == "none":
        qs = qs.filter(review_state__isnull=True)
    elif filters["state"]:
        qs = qs.filter(review_state=filters["state"])
    qs = qs.order_by(*PROCESS_SORTS[filters["sort"]][1], "pk")
    return render(request, "hazards/process_list.html", {
        "page": _page(request, qs), "filters": filters, "sorts": PROCESS_SORTS,
        "sites": Site.objects.all(),
        "states": [(k, STATE_TEXT[k]) for k in [*ReviewState.values, "none"]],
    })


@login_required
def step_list(request):
    g = request.GET
    qs = selectors.steps_with_class(request.user)
    filters = {
        "q": g.get("q", "").strip()[:100],
        "klass": _choice(g.get("klass", ""), {"1", "2", "3", "4", "5", "none"}),
        "mode": _choice(g.get("mode", ""), set(OperationMode.values)),
        "needs_review": "1" if g.get("needs_review") == "1" else "",
        "sort": _choice(g.get("sort", ""), STEP_SORTS, "process"),
    }
    qs = selectors.search(qs, filters["q"], "name", "process__name")
    if filters["klass"]:
        # On the joined current snapshot (`klass`), not a second semi-join: PostgreSQL then
        # reads the class's rows in step order from its index, so that the bounded count
        # stops after its bound whatever the number of steps of that class (a semi-join
        # hashed all of them first).
        qs = (qs.filter(klass__isnull=True) if filters["klass"] == "none"
              else qs.filter(klass=int(filters["klass"])))
    if filters["mode"]:
        qs = qs.filter(operation_mode=filters["mode"])
    if filters["needs_review"]:
        qs = qs.filter(needs_review=True)
    qs = qs.order_by(*STEP_SORTS[filters["sort"]][1], "pk")
    return render(request, "hazards/step_list.html", {
        "page": _page(request, qs), "filters": filters, "sorts": STEP_SORTS,
        "classes": [(str(k), v[0]) for k, v in CLASS_TEXT.items()] + [("none", "Not assigned")],
        "modes": OperationMode.choices,
    })
