"""Computed indicator snapshots and the queue of steps whose snapshot must be recomputed."""

from __future__ import annotations

from django.db import models
from django.db.models import Q


class IndicatorSnapshot(models.Model):
    """The indicator set of one step, computed from one exact set of inputs.

    Earlier snapshots are kept; the current one is flagged. Values are SI floats.
    """

    step = models.ForeignKey(
        "hazards.ReactionStep", on_delete=models.CASCADE, related_name="snapshots"
    )
    computed_at = models.DateTimeField()
    inputs = models.JSONField()
    inputs_hash = models.CharField(max_length=64)
    calcs_version = models.CharField(max_length=20)
    # Versions of Python and of the numeric libraries that computed these values.
    libraries = models.JSONField(default=dict, blank=True)
    values = models.JSONField()
    methods = models.JSONField(default=dict)
    parameters = models.JSONField(default=dict)
    warnings = models.JSONField(default=list)
    references = models.JSONField(default=list)
    criticality_class = models.PositiveSmallIntegerField(null=True, blank=True)
    is_current = models.BooleanField(default=True)

    class Meta:
        ordering = ["step_id", "-computed_at", "-id"]
        get_latest_by = "computed_at"
        constraints = [
            models.UniqueConstraint(
                fields=["step"], condition=Q(is_current=True), name="snapshot_one_current_per_step"
            ),
            models.CheckConstraint(
                condition=Q(criticality_class__isnull=True)
                | (Q(criticality_class__gte=1) & Q(criticality_class__lte=5)),
                name="snapshot_class_one_to_five",
            ),
        ]
        indexes = [models.Index(fields=["criticality_class"], condition=Q(is_current=True),
                                name="snapshot_current_class_idx"),
                   # The step list sorted by class reads this from the top (highest class
                   # first) or the bottom (unassigned, then lowest) and stops after a page.
                   models.Index(models.F("criticality_class").desc(nulls_last=True),
                                models.F("step").desc(), condition=Q(is_current=True),
                                name="snapshot_class_step_idx")]

    def __str__(self) -> str:
        return f"Indicators of step {self.step_id} at {self.computed_at:%Y-%m-%d %H:%M:%S}"


class PendingRecompute(models.Model):
    """A step queued by a database trigger; drained before the transaction commits."""

    step_id = models.BigIntegerField(db_index=True)
    queued_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["id"]

    def __str__(self) -> str:
        return f"step {self.step_id} queued at {self.queued_at}"


class ProcessClassCount(models.Model):
    """How many steps of a process have each current class (0: no class assigned).

    Kept by a database trigger on the snapshots (and on a step moving to another process)
    in the same transaction as the snapshot, so the start page counts classes from a few
    rows per process instead of every step's snapshot. Derived data, not a record: it is
    not audited, and `hazards.services.indicators.class_counts_rebuild` recounts it."""

    process = models.ForeignKey("hazards.Process", on_delete=models.CASCADE,
                                related_name="class_counts")
    klass = models.PositiveSmallIntegerField()
    steps = models.IntegerField(default=0)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["process", "klass"], name="class_count_unique"),
        ]
        # The start page reads a person's processes' rows from the index alone.
        indexes = [models.Index(fields=["process"], include=["klass", "steps"],
                                condition=Q(steps__gt=0), name="class_count_live_idx")]

    def __str__(self) -> str:
        return f"process {self.process_id}: {self.steps} steps of class {self.klass or 'none'}"
