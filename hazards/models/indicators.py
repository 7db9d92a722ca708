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


class ProcessClassTally(models.Model):
    """How many steps of a process have each current class: one row per process.

    Kept by a database trigger on the snapshots (and on a step moving to another process)
    in the same transaction as the snapshot, so the start page counts classes from one row
    per visible process instead of every step's snapshot. The counts are in columns, not in
    a row per class, and no index holds them: a change of class updates the row in place (a
    heap-only update, no new index entry), so the table stays about one row per process
    however often classes change (fill factor 70 leaves each page room for it; migration
    0021). Derived data, not a record: it is not audited, and
    `hazards.services.indicators.class_counts_rebuild` recounts it."""

    process = models.OneToOneField("hazards.Process", on_delete=models.CASCADE,
                                   primary_key=True, related_name="class_tally")
    unassigned = models.IntegerField(default=0, help_text="Steps without a class.")
    class_1 = models.IntegerField(default=0)
    class_2 = models.IntegerField(default=0)
    class_3 = models.IntegerField(default=0)
    class_4 = models.IntegerField(default=0)
    class_5 = models.IntegerField(default=0)

    # klass (0: no class assigned) -> column
    COLUMNS = {0: "unassigned", 1: "class_1", 2: "class_2", 3: "class_3", 4: "class_4",
               5: "class_5"}

    def __str__(self) -> str:
        return f"process {self.process_id}: steps per class {self.counts()}"

    def counts(self) -> dict[int, int]:
        """{klass: steps} of the classes this process has steps in (0: no class)."""
        return {k: n for k, column in self.COLUMNS.items() if (n := getattr(self, column))}
