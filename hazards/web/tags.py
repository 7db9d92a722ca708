"""Template filters and tags of the pages: `{% load exo %}`."""

from __future__ import annotations

from urllib.parse import urlencode

from django import template
from django.utils.html import format_html
from django.utils.safestring import mark_safe

from hazards.web import display
from hazards.web.audit import is_auditor

register = template.Library()


@register.filter
def qty(si_value, kind):
    return display.quantity(si_value, kind or None)


@register.filter
def num(value):
    return display.number(value)


@register.simple_tag
def klass(value):
    """The criticality class badge: a shape, a word and a colour."""
    if value in (None, ""):
        return mark_safe('<span class="klass klass-none"><span class="klass-shape" '
                         'aria-hidden="true"></span>Not assigned</span>')
    value = int(value)
    label, meaning, _shape = display.CLASS_TEXT[value]
    return format_html(
        '<span class="klass klass-{}" title="{}"><span class="klass-shape" aria-hidden="true">'
        '</span>{}<span class="visually-hidden"> ({})</span></span>',
        value, meaning, label, meaning)


@register.simple_tag
def state(value):
    value = value or "none"
    return format_html('<span class="state state-{}"><span class="state-mark" '
                       'aria-hidden="true"></span>{}</span>',
                       value, display.STATE_TEXT.get(value, value))


@register.filter
def state_text(value) -> str:
    """A review state in the pages' words (the wire value never shows)."""
    return display.STATE_TEXT.get(value or "none", value)


@register.simple_tag(takes_context=True)
def query(context, **changes):
    """The current query string with some parameters changed (filters survive in the URL)."""
    request = context["request"]
    params = request.GET.copy()
    for key, value in changes.items():
        if value in (None, ""):
            params.pop(key, None)
        else:
            params[key] = value
    return "?" + urlencode(sorted(params.items()))


@register.filter
def auditor(user):
    return bool(getattr(user, "is_authenticated", False)) and is_auditor(user)


@register.filter
def get(mapping, key):
    try:
        return mapping.get(key)
    except AttributeError:
        return None


@register.filter
def short(value, n=12):
    text = str(value or "")
    return text if len(text) <= int(n) else text[: int(n)] + "…"
