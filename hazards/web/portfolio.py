"""The portfolio: every visible step with its class, indicators, approval state and due date,
sortable and filterable in the URL, rolled up per process and site, exported as CSV or as a
spreadsheet file (both streamed, read with one server-side cursor)."""

from __future__ import annotations

import csv
import datetime as dt
from urllib.parse import urlencode

from django.contrib.auth.decorators import login_required
from django.db.models import F, Q
from django.http import StreamingHttpResponse
from django.shortcuts import render

from hazards.models import Site
from hazards.oversight import selectors
from hazards.oversight.revalidation import today
from hazards.quantities import from_si
from hazards.web import display
from hazards.web.paging import keyset_page
from hazards.web.xlsx import stream_xlsx

PAGE_SIZE = 50

SORTS = {
    "process": ("Process, then sequence", [F("process__name").asc(), F("sequence").asc()]),
    "-klass": ("Class, highest first", [F("klass").desc(nulls_last=True)]),
    "-mtsr": ("MTSR, highest first", [F("mtsr_k").desc(nulls_last=True)]),
    "td24": ("TD24, lowest first", [F("td24_k").asc(nulls_last=True)]),
    "tmr": ("TMRad at MTSR, shortest first", [F("tmr_ad_s").asc(nulls_last=True)]),
    "margin": ("Cooling margin, smallest first", [F("cooling_margin").asc(nulls_last=True)]),
    "due": ("Revalidation due, soonest first", [F("due_on").asc(nulls_last=True)]),
}
CLASSES = [(str(k), v[0]) for k, v in display.CLASS_TEXT.items()] + [("none", "Not assigned")]

# (column heading, row attribute, quantity kind or None); the unit goes into the heading.
COLUMNS = [
    ("MTSR", "mtsr_k", "temperature"),
    ("MTT", "mtt_k", "temperature"),
    ("TD24", "td24_k", "temperature"),
    ("TMRad at MTSR", "tmr_ad_s", "duration_h"),
    ("Cooling margin", "cooling_margin", None),
]


def _choice(value, allowed, default=""):
    return value if value in allowed else default


def _filters(request) -> dict:
    g = request.GET
    return {
        "q": g.get("q", "").strip()[:100],
        "klass": _choice(g.get("klass", ""), {k for k, _ in CLASSES}),
        "site": _choice(g.get("site", ""), set(Site.objects.values_list("code", flat=True))),
        "approval": _choice(g.get("approval", ""), set(selectors.APPROVAL_TEXT)),
        "overdue": "1" if g.get("overdue") == "1" else "",
        "sort": _choice(g.get("sort", ""), SORTS, "process"),
    }


def _steps(request, filters: dict, on: dt.date):
    qs = selectors.portfolio_steps(request.user, today=on)
    if filters["q"]:
        qs = qs.filter(Q(process__name__icontains=filters["q"]) | Q(name__icontains=filters["q"]))
    if filters["klass"] == "none":
        qs = qs.filter(klass__isnull=True)
    elif filters["klass"]:
        qs = qs.filter(klass=int(filters["klass"]))
    if filters["site"]:
        qs = qs.filter(process__site__code=filters["site"])
    if filters["approval"]:
        qs = qs.filter(approval=filters["approval"])
    if filters["overdue"]:
        qs = qs.filter(overdue=True)
    return qs


def _unit(kind: str | None) -> str:
    return display.human_unit(kind) if kind else ""


def headings() -> list[str]:
    """The export's column headings, each quantity with its display unit."""
    cells = ["Site", "Process", "Step", "Class"]
    cells += [f"{label} [{_unit(kind)}]" if kind else label for label, _a, kind in COLUMNS]
    return cells + [
        "Approval",
        "In force: revision",
        "Pending: revision",
        "Revalidation due",
        "Overdue",
        "Page",
    ]


def export_row(step, base_url: str) -> list:
    """A step as numbers in the pages' display units (None where unknown)."""
    cells = [step.process.site.code, step.process.name, f"{step.sequence}. {step.name}", step.klass]
    for _label, attr, kind in COLUMNS:
        value = getattr(step, attr)
        cells.append(from_si(value, kind=kind) if kind and value is not None else value)
    return cells + [
        selectors.APPROVAL_TEXT[step.approval],
        step.in_force_number,
        step.pending_number,
        step.due_on,
        "yes" if step.overdue else "no",
        f"{base_url}/steps/{step.pk}/",
    ]


def _rows_for_page(page) -> None:
    for step in page:
        step.cells = [
            (
                label,
                display.quantity(getattr(step, attr), kind)
                if kind
                else display.number(getattr(step, attr)),
            )
            for label, attr, kind in COLUMNS
        ]
        step.approval_text = selectors.APPROVAL_TEXT[step.approval]


@login_required
def page(request):
    on = today()
    filters = _filters(request)
    qs = _steps(request, filters, on)
    rows = keyset_page(request, qs.order_by(*SORTS[filters["sort"]][1], "pk"), PAGE_SIZE)
    _rows_for_page(rows)
    query = urlencode({k: v for k, v in filters.items() if v})
    return render(
        request,
        "hazards/portfolio.html",
        {
            "page": rows,
            "filters": filters,
            "sorts": SORTS,
            "classes": CLASSES,
            "sites": Site.objects.order_by("code"),
            "today": on,
            "approvals": list(selectors.APPROVAL_TEXT.items()),
            "columns": [(label, _unit(kind)) for label, _a, kind in COLUMNS],
            "rollups": selectors.portfolio_rollups(qs),
            "query": query,
        },
    )


class _Echo:
    def write(self, value):
        return value


@login_required
def export(request, fmt: str):
    on = today()
    filters = _filters(request)
    qs = _steps(request, filters, on).order_by(*SORTS[filters["sort"]][1], "pk")
    base_url = request.build_absolute_uri("/").rstrip("/")
    rows = (export_row(step, base_url) for step in qs.iterator(chunk_size=500))
    name = f"exoledger-portfolio-{on.isoformat()}"
    if fmt == "xlsx":
        response = StreamingHttpResponse(
            stream_xlsx(headings(), rows, sheet="Portfolio"),
            content_type="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        )
        response["Content-Disposition"] = f'attachment; filename="{name}.xlsx"'
        return response
    writer = csv.writer(_Echo())

    def lines():
        yield "\ufeff"  # so that spreadsheet programs read the degree sign as UTF-8
        yield writer.writerow(headings())
        for row in rows:
            yield writer.writerow(["" if c is None else c for c in row])

    response = StreamingHttpResponse(lines(), content_type="text/csv; charset=utf-8")
    response["Content-Disposition"] = f'attachment; filename="{name}.csv"'
    return response
