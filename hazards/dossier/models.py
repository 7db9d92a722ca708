"""Issued dossiers: one row per version, immutable once its PDF is done."""

from __future__ import annotations

import pgtrigger
from django.conf import settings
from django.db import models
from django.db.models import Q


class DossierStatus(models.TextChoices):
    QUEUED = "queued", "Queued"
    RENDERING = "rendering", "Rendering"
    DONE = "done", "Done"
    FAILED = "failed", "Failed"


class Dossier(models.Model):
    """Version `version` of a process's dossier.

    `content` is frozen when the dossier is requested: `record` (the canonical content of the
    revision, attached to the PDF as revision.json, SHA-256 in `content_sha256`) and `context`
    (signatures, findings, history, audit head, series data) that the pages show beside it.
    The PDF is rendered from `content` alone, so a re-render gives the same bytes.
    """

    process = models.ForeignKey(
        "hazards.Process", on_delete=models.PROTECT, related_name="dossiers"
    )
    # The revision shown; null for a dossier of a process that has no signed revision yet.
    revision = models.ForeignKey(
        "review.ProcessRevision", on_delete=models.PROTECT, null=True, blank=True,
        related_name="dossiers",
    )
    version = models.PositiveIntegerField()
    status = models.CharField(
        max_length=10, choices=DossierStatus.choices, default=DossierStatus.QUEUED
    )
    content = models.JSONField()
    content_sha256 = models.CharField(max_length=64)
    context_sha256 = models.CharField(max_length=64)
    seal = models.CharField(max_length=64)
    pdf = models.BinaryField(null=True, blank=True, editable=False)
    sha256 = models.CharField(max_length=64, blank=True)
    size_bytes = models.PositiveIntegerField(null=True, blank=True)
    requested_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
        related_name="requested_dossiers",
    )
    reason = models.CharField(max_length=200, blank=True)
    created_at = models.DateTimeField()
    started_at = models.DateTimeField(null=True, blank=True)
    finished_at = models.DateTimeField(null=True, blank=True)
    # Counts claims: a job rendered twice would show attempts > 1 without a failure between.
    attempts = models.PositiveIntegerField(default=0)
    worker = models.CharField(max_length=120, blank=True)
    error = models.TextField(blank=True)

    class Meta:
        ordering = ["process_id", "-version"]
        get_latest_by = "version"
        constraints = [
            models.UniqueConstraint(fields=["process", "version"], name="dossier_version_unique"),
            models.CheckConstraint(condition=Q(version__gte=1), name="dossier_version_positive"),
            models.CheckConstraint(
                condition=~Q(status="done") | (Q(pdf__isnull=False) & ~Q(sha256="")),
                name="dossier_done_has_pdf",
                violation_error_message="A done dossier needs its PDF and its SHA-256.",
            ),
        ]
        triggers = [
            # What a dossier shows is fixed when it is requested.
            pgtrigger.ReadOnly(
                name="dossier_content_read_only",
                fields=["process", "revision", "version", "content", "content_sha256", "context_sha256",
                        "seal", "created_at", "requested_by"],
            ),
            # An issued dossier is never altered nor deleted.
            pgtrigger.Protect(
                name="dossier_done_immutable",
                operation=pgtrigger.Update | pgtrigger.Delete,
                condition=pgtrigger.Q(old__status="done"),
            ),
        ]

    def __str__(self) -> str:
        return f"Dossier v{self.version} of process {self.process_id} ({self.status})"

    @property
    def file_name(self) -> str:
        return f"dossier-process-{self.process_id}-v{self.version}.pdf"
