"""Keyset ("after this key") paging of an ordered queryset, for pages and the API.

A page after a row is read as `WHERE (k1, k2, …, pk) > (v1, v2, …, id) ORDER BY … LIMIT n`,
written out per key so that each key keeps its own direction and NULL placement; the
first key also gets a plain bound (`k1 >= v1`) so that PostgreSQL walks the index of that
ordering from the key instead of reading and sorting the whole table as OFFSET does.

The cursor handed to clients names the ordering it belongs to and the key values of the
row it continues from (base64 of JSON); a cursor of another ordering or list is refused.
Counts are exact up to `COUNT_BOUND` rows and omitted (None) beyond, so that a count never
walks more than that many rows of the index.
"""

from __future__ import annotations

import base64
import binascii
import datetime as dt
import json
from dataclasses import dataclass

from django.core.exceptions import FieldDoesNotExist
from django.db import models
from django.db.models import F, Q
from django.db.models.expressions import OrderBy
from django.utils.dateparse import parse_date, parse_datetime

COUNT_BOUND = 1000
BAD_CURSOR = "not a cursor of this list and ordering (follow the `next` or `previous` link)"


class UnsupportedOrdering(ValueError):
    """The ordering has a key keyset paging cannot continue from (an expression)."""


class BadCursor(ValueError):
    pass


@dataclass(frozen=True)
class Key:
    path: str
    desc: bool
    nulls_last: bool
    nullable: bool
    kind: str = ""  # "datetime" or "date" when the value needs parsing back

    def reversed(self) -> Key:
        return Key(self.path, not self.desc, not self.nulls_last, self.nullable, self.kind)

    def order(self):
        expr = F(self.path)
        if not self.nullable:
            return expr.desc() if self.desc else expr.asc()
        if self.desc:
            return expr.desc(nulls_last=True) if self.nulls_last else expr.desc(nulls_first=True)
        return expr.asc(nulls_last=True) if self.nulls_last else expr.asc(nulls_first=True)


def _field(model, path: str):
    """(nullable, kind, path) of a model path; a relation at the end means its id."""
    target = model
    parts = path.split("__")
    nullable = False
    for i, part in enumerate(parts):
        try:
            field = target._meta.get_field(part)
        except FieldDoesNotExist:
            return True, "", path  # an annotation: assume it may be NULL
        nullable = nullable or bool(getattr(field, "null", False))
        if field.is_relation and i < len(parts) - 1:
            target = field.related_model
            continue
        if field.is_relation:
            named_by_id = part == getattr(field, "attname", None)
            return nullable, "", path if named_by_id or not field.many_to_one else f"{path}_id"
        kind = (
            "datetime"
            if isinstance(field, models.DateTimeField)
            else "date"
            if isinstance(field, models.DateField)
            else ""
        )
        return nullable, kind, path
    return nullable, "", path


def keys_of(queryset) -> list[Key]:
    """The keys of the queryset's ordering, ending with the primary key."""
    query = queryset.query
    order = list(query.order_by) or (
        list(queryset.model._meta.ordering) if query.default_ordering else []
    )
    keys: list[Key] = []
    for item in order:
        if isinstance(item, str):
            desc, name = item.startswith("-"), item.lstrip("-")
            nulls_last = not desc
        elif isinstance(item, OrderBy) and isinstance(item.expression, F):
            desc, name = item.descending, item.expression.name
            nulls_last = item.nulls_last if (item.nulls_last or item.nulls_first) else not desc
        else:
            raise UnsupportedOrdering(repr(item))
        if name == "?":
            raise UnsupportedOrdering(name)
        nullable, kind, path = _field(queryset.model, "pk" if name == "id" else name)
        if path in ("pk", "id"):
            keys.append(Key("pk", desc, True, False))
            return keys
        keys.append(Key(path, desc, nulls_last, nullable, kind))
    # Ties go by the primary key in the direction of the last key, so that one index on
    # (key, id) read forwards or backwards gives the whole order.
    keys.append(Key("pk", keys[-1].desc if keys else False, True, False))
    return keys


def _after(key: Key, value) -> Q | None:
    if value is None:
        return None if key.nulls_last else Q(**{f"{key.path}__isnull": False})
    q = Q(**{f"{key.path}__{'lt' if key.desc else 'gt'}": value})
    if key.nullable and key.nulls_last:
        q |= Q(**{f"{key.path}__isnull": True})
    return q


def _equal(key: Key, value) -> Q:
    return Q(**{f"{key.path}__isnull": True}) if value is None else Q(**{key.path: value})


def after_q(keys: list[Key], values: list) -> Q:
    """Rows strictly after the row with these key values, in this ordering."""
    result = None
    prefix = Q()
    for key, value in zip(keys, values, strict=True):
        step = _after(key, value)
        if step is not None:
            result = prefix & step if result is None else result | (prefix & step)
        prefix &= _equal(key, value)
    if result is None:
        return Q(pk__in=[])
    first, v0 = keys[0], values[0]
    if v0 is not None and not first.nullable:  # lets the planner start the index scan there
        result &= Q(**{f"{first.path}__{'lte' if first.desc else 'gte'}": v0})
    return result


def annotated(queryset, keys):
    return queryset.annotate(
        **{f"_key{i}": F(k.path) for i, k in enumerate(keys) if k.path != "pk"}
    )


def values_of(row, keys) -> list:
    return [row.pk if k.path == "pk" else getattr(row, f"_key{i}") for i, k in enumerate(keys)]


@dataclass
class KeysetPage:
    rows: list
    first_key: list | None
    last_key: list | None
    has_next: bool
    has_previous: bool


def page(
    queryset, keys: list[Key], limit: int, *, after: list | None = None, before: list | None = None
) -> KeysetPage:
    """`limit` rows after (or before) the given key values; the query reads limit + 1 rows."""
    backwards = before is not None
    walk = [k.reversed() for k in keys] if backwards else keys
    qs = annotated(queryset, keys)
    anchor = before if backwards else after
    if anchor is not None:
        qs = qs.filter(after_q(walk, anchor))
    rows = list(qs.order_by(*(k.order() for k in walk))[: limit + 1])
    more = len(rows) > limit
    rows = rows[:limit]
    if backwards:
        rows.reverse()
    first = values_of(rows[0], keys) if rows else None
    last = values_of(rows[-1], keys) if rows else None
    return KeysetPage(
        rows,
        first,
        last,
        has_next=(not backwards and more) or (backwards and anchor is not None),
        has_previous=(backwards and more) or (not backwards and anchor is not None),
    )


def offset_page(queryset, keys: list[Key], limit: int, offset: int) -> KeysetPage:
    """`limit` rows from `offset` (reads every row before it: bound the offset)."""
    rows = list(
        annotated(queryset, keys).order_by(*(k.order() for k in keys))[offset : offset + limit + 1]
    )
    more = len(rows) > limit
    rows = rows[:limit]
    return KeysetPage(
        rows,
        values_of(rows[0], keys) if rows else None,
        values_of(rows[-1], keys) if rows else None,
        has_next=more,
        has_previous=offset > 0,
    )


def signature(keys: list[Key]) -> str:
    return ",".join(("-" if k.desc else "") + k.path for k in keys)


def _plain(value):
    if isinstance(value, dt.datetime | dt.date):
        return value.isoformat()
    return value


def encode(keys: list[Key], values: list, direction: str) -> str:
    raw = json.dumps(
        {"o": signature(keys), "v": [_plain(v) for v in values], "d": direction},
        separators=(",", ":"),
    )
    return base64.urlsafe_b64encode(raw.encode()).decode().rstrip("=")


def decode(keys: list[Key], token: str) -> tuple[str, list]:
    """(direction, key values) of a cursor of this ordering; BadCursor otherwise."""
    try:
        raw = base64.urlsafe_b64decode(token + "=" * (-len(token) % 4))
        data = json.loads(raw)
        values, direction = data["v"], data["d"]
        ok = (
            data["o"] == signature(keys)
            and isinstance(values, list)
            and len(values) == len(keys)
            and direction in ("next", "prev")
        )
    except (binascii.Error, ValueError, TypeError, KeyError, UnicodeDecodeError):
        ok = False
    if not ok:
        raise BadCursor(BAD_CURSOR)
    parsed = []
    for key, value in zip(keys, values, strict=True):
        if value is not None and key.kind == "datetime":
            value = parse_datetime(value) if isinstance(value, str) else None
            if value is None:
                raise BadCursor(BAD_CURSOR)
        elif value is not None and key.kind == "date":
            value = parse_date(value) if isinstance(value, str) else None
            if value is None:
                raise BadCursor(BAD_CURSOR)
        elif not (value is None or isinstance(value, str | int | float)) or isinstance(value, bool):
            raise BadCursor(BAD_CURSOR)
        parsed.append(value)
    return direction, parsed


def bounded_count(queryset, bound: int | None = None) -> int | None:
    """The exact number of rows up to `bound`; None beyond (counting would walk the table)."""
    bound = COUNT_BOUND if bound is None else bound
    n = queryset.order_by()[: bound + 1].count()
    return n if n <= bound else None
