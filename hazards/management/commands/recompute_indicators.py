"""Recompute the indicator snapshots of every step (after a `calcs` upgrade, say)."""

from __future__ import annotations

import sys

from django.core.management.base import BaseCommand

from hazards.models import IndicatorSnapshot, ReactionStep
from hazards.services.indicators import recompute_steps

BATCH = 200


class Command(BaseCommand):
    help = "Recompute every step's indicators and report the steps whose class changed."

    def add_arguments(self, parser):
        parser.add_argument("--force", action="store_true",
                            help="Store a new snapshot even where inputs and calcs are unchanged.")
        parser.add_argument("--process", type=int, help="Only the steps of this process id.")

    def handle(self, *args, force, process, **options):
        steps = ReactionStep._base_manager.order_by("pk")
        if process:
            steps = steps.filter(process_id=process)
        ids = list(steps.values_list("pk", flat=True))
        total = len(ids)
        renewed, moved = 0, []
        for start in range(0, total, BATCH):
            chunk = ids[start:start + BATCH]
            changed = recompute_steps(chunk, force=force)
            renewed += len(changed)
            moved += [(pk, old, new) for pk, (old, new) in changed.items() if old != new]
            self._progress(min(start + BATCH, total), total)
        if total:
            sys.stderr.write("\n")
        self.stdout.write(f"{total} steps checked, {renewed} new snapshots.")
        if moved:
            self.stdout.write("Steps whose criticality class changed:")
            names = dict(
                ReactionStep._base_manager.filter(pk__in=[m[0] for m in moved])
                .values_list("pk", "name")
            )
            why = _reasons([m[0] for m in moved])
            for pk, old, new in moved:
                self.stdout.write(f"  step {pk} ({names.get(pk, '?')}): {_cls(old)} -> {_cls(new)}")
                for text in why.get(pk, []):
                    self.stdout.write(f"    why: {text}")
        else:
            self.stdout.write("No criticality class changed.")

    @staticmethod
    def _progress(done: int, total: int) -> None:
        width = 30
        filled = int(width * done / total) if total else width
        sys.stderr.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
        sys.stderr.flush()


# Warnings of the new snapshot that explain a move of class (an input now missing, a basis
# or barrier the calcs now treat differently).
_WHY = ("unknown", "endothermic", "vacuum", "final mass", "capped at 1", "before the whole feed")


def _reasons(step_ids) -> dict[int, list[str]]:
    out: dict[int, list[str]] = {}
    for step_id, warnings in IndicatorSnapshot.objects.filter(
            step_id__in=step_ids, is_current=True).values_list("step_id", "warnings"):
        out[step_id] = [w for w in warnings if any(word in w for word in _WHY)]
    return out


def _cls(value) -> str:
    return "none" if value is None else f"class {value}"
