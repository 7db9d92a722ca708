"""Pagination of every API list: keyset by default, `?offset=` where a client asks for it.

A first page (no `cursor`, no `offset`) and every `next`/`previous` link use a keyset cursor
(`?cursor=`): the page after the last row's ordering key, read from the index of that
ordering, so page 1000 costs what page 1 costs. `?offset=` still works, up to `MAX_OFFSET`
(OFFSET reads and drops every row before it). `count` is exact up to
`hazards.keyset.COUNT_BOUND` rows and `null` beyond (a count walks the rows it counts).
"""

from __future__ import annotations

from drf_spectacular.utils import OpenApiParameter
from rest_framework.exceptions import ValidationError
from rest_framework.pagination import LimitOffsetPagination
from rest_framework.response import Response
from rest_framework.utils.urls import remove_query_param, replace_query_param

from hazards import keyset

MAX_LIMIT = 1000
MAX_OFFSET = 10_000


class StrictLimitOffsetPagination(LimitOffsetPagination):
    """Keyset pages with `?cursor=`, bounded `?limit=&offset=`, a bounded count."""

    max_limit = MAX_LIMIT
    max_offset = MAX_OFFSET
    cursor_query_param = "cursor"

    def _read(self, request, name: str, minimum: int, maximum: int | None, default):
        values = request.query_params.getlist(name)
        if not values:
            return default
        raw = values[0]
        if (
            len(values) > 1
            or not raw.isdigit()
            or not (minimum <= int(raw) <= (maximum if maximum is not None else int(raw)))
        ):
            upper = f" and at most {maximum}" if maximum is not None else ""
            hint = (
                "; follow `next` (a cursor) to go further"
                if name == self.offset_query_param
                else ""
            )
            raise ValidationError(
                {name: [f"must be one integer of at least {minimum}{upper}{hint}"]}
            )
        return int(raw)

    def get_limit(self, request):
        return self._read(request, self.limit_query_param, 1, self.max_limit, self.default_limit)

    def get_offset(self, request):
        return self._read(request, self.offset_query_param, 0, self.max_offset, 0)

    def paginate_queryset(self, queryset, request, view=None):
        self.request = request
        self.limit = self.get_limit(request)
        self.offset = self.get_offset(request)
        token = request.query_params.get(self.cursor_query_param)
        if token is not None and self.offset_query_param in request.query_params:
            raise ValidationError(
                {self.cursor_query_param: ["give either a cursor or an offset, not both"]}
            )
        self.count = keyset.bounded_count(queryset)
        try:
            self.keys = keyset.keys_of(queryset)
        except keyset.UnsupportedOrdering:
            self.keys = None
        if self.offset_query_param in request.query_params or self.keys is None:
            if token is not None:
                raise ValidationError({self.cursor_query_param: [keyset.BAD_CURSOR]})
            return self._offset_page(queryset)
        after = before = None
        if token is not None:
            try:
                direction, values = keyset.decode(self.keys, token)
            except keyset.BadCursor as exc:
                raise ValidationError({self.cursor_query_param: [str(exc)]}) from None
            after, before = (values, None) if direction == "next" else (None, values)
        self.page = keyset.page(queryset, self.keys, self.limit, after=after, before=before)
        return self.page.rows

    def _offset_page(self, queryset):
        self.page = None
        if self.keys is not None:  # the same total order as the keyset pages (ties by id)
            queryset = queryset.order_by(*(k.order() for k in self.keys))
        rows = list(queryset[self.offset : self.offset + self.limit + 1])
        self.offset_has_next = len(rows) > self.limit
        return rows[: self.limit]

    def get_paginated_response(self, data):
        return Response(
            {
                "count": self.count,
                "next": self.get_next_link(),
                "previous": self.get_previous_link(),
                "results": data,
            }
        )

    def _cursor_link(self, values, direction):
        url = remove_query_param(self.request.build_absolute_uri(), self.offset_query_param)
        url = replace_query_param(url, self.limit_query_param, self.limit)
        return replace_query_param(
            url, self.cursor_query_param, keyset.encode(self.keys, values, direction)
        )

    def get_next_link(self):
        if self.page is None:
            if not self.offset_has_next:
                return None
            return (
                super().get_next_link()
                if self.count is not None
                else replace_query_param(
                    replace_query_param(
                        self.request.build_absolute_uri(), self.limit_query_param, self.limit
                    ),
                    self.offset_query_param,
                    self.offset + self.limit,
                )
            )
        if not self.page.has_next or self.page.last_key is None:
            return None
        return self._cursor_link(self.page.last_key, "next")

    def get_previous_link(self):
        if self.page is None:
            return super().get_previous_link()
        if not self.page.has_previous:
            return None
        if self.page.first_key is None:  # nothing before an empty page past the end: start
            url = remove_query_param(self.request.build_absolute_uri(), self.cursor_query_param)
            return remove_query_param(url, self.offset_query_param)
        return self._cursor_link(self.page.first_key, "prev")

    def get_paginated_response_schema(self, schema):
        result = super().get_paginated_response_schema(schema)
        result["properties"]["count"] = {
            "type": "integer",
            "nullable": True,
            "example": 123,
            "description": f"Exact number of matching rows up to {keyset.COUNT_BOUND}; "
            f"null when there are more (counting them would read them all).",
        }
        result["properties"]["next"]["example"] = (
            f"http://api.example.org/accounts/?{self.limit_query_param}=100"
            f"&{self.cursor_query_param}=eyJvIjoi…"
        )
        return result

    def get_schema_operation_parameters(self, view):
        params = super().get_schema_operation_parameters(view)
        for param in params:
            param["schema"]["minimum"] = 1 if param["name"] == self.limit_query_param else 0
            if param["name"] == self.limit_query_param:
                param["schema"]["maximum"] = self.max_limit
            if param["name"] == self.offset_query_param:
                param["schema"]["maximum"] = self.max_offset
                param["description"] = (
                    f"Rows to skip (at most {self.max_offset}); without it pages are keyset "
                    f"pages: follow `next` and `previous`."
                )
        params.append(
            {
                "name": self.cursor_query_param,
                "required": False,
                "in": "query",
                "description": "The position of a page, as given in `next` or `previous` "
                "(not with `offset`).",
                "schema": {"type": "string"},
            }
        )
        return params


class SingleQueryValuesMixin:
    """A query parameter given twice is refused (the schema describes single values)."""

    def initial(self, request, *args, **kwargs):
        repeated = sorted(k for k, v in request.query_params.lists() if len(v) > 1)
        if repeated:
            raise ValidationError({k: ["must be given once"] for k in repeated})
        super().initial(request, *args, **kwargs)


class KeyedHistoryPagination(StrictLimitOffsetPagination):
    """The page shape of every list for a history, newest first: `?limit=` and `?cursor=`
    (`next` leads to older events, `previous` to newer). `fetch(limit=, before=, after=)`
    reads one page in SQL (`hazards.review.history.history_page`)."""

    def respond(self, request, fetch, serialize, bad_key: type[Exception]):
        self.request = request
        self.limit = self.get_limit(request)
        token = request.query_params.get(self.cursor_query_param, "")
        direction, _, key = token.partition(".")
        if token and (direction not in ("older", "newer") or not key):
            raise ValidationError({self.cursor_query_param: [keyset.BAD_CURSOR]})
        try:
            page = fetch(
                limit=self.limit,
                before=key if direction == "older" else None,
                after=key if direction == "newer" else None,
            )
        except bad_key:
            raise ValidationError({self.cursor_query_param: [keyset.BAD_CURSOR]}) from None

        def link(name, value):
            if value is None:
                return None
            url = replace_query_param(
                self.request.build_absolute_uri(), self.limit_query_param, self.limit
            )
            return replace_query_param(url, self.cursor_query_param, f"{name}.{value}")

        return Response(
            {
                "count": page.count,
                "next": link("older", page.older),
                "previous": link("newer", page.newer),
                "results": serialize(page.rows),
            }
        )

    def schema_parameters(self) -> list:
        return [
            OpenApiParameter(
                self.limit_query_param,
                int,
                required=False,
                description=f"Events per page (1 to {self.max_limit}, "
                f"default {self.default_limit}).",
            ),
            OpenApiParameter(
                self.cursor_query_param,
                str,
                required=False,
                description="The position of a page, as given in `next` "
                "(older events) or `previous` (newer).",
            ),
        ]
