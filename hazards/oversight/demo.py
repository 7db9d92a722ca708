"""The oversight part of the demo: the Varnholt site's change policy (lighter review path
off, as by default), revalidation schedules of the endorsed demo revisions, and today's
reminders. Idempotent: a second run creates and sends nothing new."""

from __future__ import annotations

from hazards.models import Site
from hazards.oversight.models import ChangePolicy
from hazards.oversight.services import refresh_and_remind


def load_oversight_demo() -> dict:
    for site in Site.objects.filter(code="varnholt"):
        ChangePolicy.objects.get_or_create(site=site)
    return refresh_and_remind()
