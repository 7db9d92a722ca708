"""`?limit=&offset=` pagination that refuses what the schema does not allow."""

from __future__ import annotations

from rest_framework.exceptions import ValidationError
from rest_framework.pagination import LimitOffsetPagination

MAX_LIMIT = 1000


class StrictLimitOffsetPagination(LimitOffsetPagination):
    max_limit = MAX_LIMIT

    def _read(self, request, name: str, minimum: int, maximum: int | None, default):
        values = request.query_params.getlist(name)
        if not values:
            return default
        raw = values[0]
        if len(values) > 1 or not raw.isdigit() or not (
                minimum <= int(raw) <= (maximum if maximum is not None else int(raw))):
            upper = f" and at most {maximum}" if maximum is not None else ""
            raise ValidationError({name: [f"must be one integer of at least {minimum}{upper}"]})
        return int(raw)

    def get_limit(self, request):
        return self._read(request, self.limit_query_param, 1, self.max_limit, self.default_limit)

    def get_offset(self, request):
        return self._read(request, self.offset_query_param, 0, None, 0)

    def get_schema_operation_parameters(self, view):
        params = super().get_schema_operation_parameters(view)
        for param in params:
            param["schema"]["minimum"] = 1 if param["name"] == self.limit_query_param else 0
            if param["name"] == self.limit_query_param:
                param["schema"]["maximum"] = self.max_limit
        return params


class SingleQueryValuesMixin:
    """A query parameter given twice is refused (the schema describes single values)."""

    def initial(self, request, *args, **kwargs):
        repeated = sorted(k for k, v in request.query_params.lists() if len(v) > 1)
        if repeated:
            raise ValidationError({k: ["must be given once"] for k in repeated})
        super().initial(request, *args, **kwargs)
