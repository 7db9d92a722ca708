"""Pages of the lists: keyset links (`?after=` / `?before=`), a bounded `?page=`, a bounded count.

`?after=` continues after the last row's ordering key, read from the index of that ordering,
so the thousandth page costs what the first does. `?page=N` (a link someone kept) still
works up to `MAX_PAGE` (OFFSET reads every row before it); its Next link is a keyset link.
The count is exact up to `hazards.keyset.COUNT_BOUND` and "more than" that beyond.
"""

from __future__ import annotations

from dataclasses import dataclass
from urllib.parse import urlencode

from hazards import keyset

MAX_PAGE = 500
PAGE_PARAMS = ("page", "after", "before")


@dataclass
class ListPage:
    rows: list
    count: int | None
    next_query: str | None
    previous_query: str | None

    def __iter__(self):
        return iter(self.rows)

    def __len__(self):
        return len(self.rows)

    @property
    def object_list(self):
        return self.rows

    @property
    def summary(self) -> str:
        if self.count is None:
            return f"more than {keyset.COUNT_BOUND} in all"
        return f"{self.count} in all"


def link(request, **param) -> str:
    params = request.GET.copy()
    for name in PAGE_PARAMS:
        params.pop(name, None)
    params.update(param)
    return "?" + urlencode(sorted(params.items()))


def _page_number(request) -> int:
    raw = request.GET.get("page", "")
    return min(int(raw), MAX_PAGE) if raw.isdigit() and int(raw) >= 1 else 1


def keyset_page(request, queryset, size: int, *, count: bool = True) -> ListPage:
    """One page of an ordered queryset, from the request's `after`, `before` or `page`."""
    keys = keyset.keys_of(queryset)
    after = before = None
    number = 1
    for name in ("after", "before"):
        token = request.GET.get(name)
        if token:
            try:
                direction, values = keyset.decode(keys, token)
            except keyset.BadCursor:
                break  # a stale or foreign link: the first page
            if direction == ("next" if name == "after" else "prev"):
                after, before = (values, None) if name == "after" else (None, values)
            break
    else:
        number = _page_number(request)
    if number > 1:
        page = keyset.offset_page(queryset, keys, size, (number - 1) * size)
    else:
        page = keyset.page(queryset, keys, size, after=after, before=before)
    next_query = (
        link(request, after=keyset.encode(keys, page.last_key, "next"))
        if page.has_next and page.last_key
        else None
    )
    if not page.has_previous:
        previous_query = None
    elif page.first_key is None:
        previous_query = link(request)
    else:
        previous_query = link(request, before=keyset.encode(keys, page.first_key, "prev"))
    return ListPage(
        page.rows, keyset.bounded_count(queryset) if count else None, next_query, previous_query
    )
