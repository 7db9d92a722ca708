"""Render the dossier of a process's latest revision now, without the worker."""

from __future__ import annotations

import errno
import os
import tempfile
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from hazards.dossier.models import DossierStatus
from hazards.dossier.services import dossier_render, dossier_request
from hazards.models import Process


def write_atomically(path: Path, data: bytes) -> None:
    """Temp file in the same folder, fsync, rename: never a partial file at `path`."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


class Command(BaseCommand):
    help = ("Issue (or reuse) the dossier of a process's latest revision, render it at once "
            "and write the PDF.")

    def add_arguments(self, parser):
        parser.add_argument("process_id", type=int)
        parser.add_argument("--output", "-o", required=True, help="Where to write the PDF.")
        parser.add_argument("--reissue", action="store_true",
                            help="Issue a new version even if this content was issued before.")
        parser.add_argument("--reason", default="rendered with manage.py render_dossier")

    def handle(self, *args, process_id, output, reissue, reason, **options):
        process = Process.objects.filter(pk=process_id).first()
        if process is None:
            raise CommandError(f"No process {process_id}.")
        dossier, created = dossier_request(process=process, reason=reason, reissue=reissue,
                                           enqueue=False)
        if dossier.status in (DossierStatus.QUEUED,):
            dossier = dossier_render(dossier_id=dossier.pk, worker="render_dossier",
                                     sandbox=True) or dossier
        dossier.refresh_from_db()
        if dossier.status != DossierStatus.DONE:
            raise CommandError(f"Dossier {dossier.pk} (version {dossier.version}) is "
                               f"{dossier.status}: {dossier.error or 'being rendered elsewhere'}")
        try:
            write_atomically(Path(output), bytes(dossier.pdf))
        except OSError as exc:
            if exc.errno in (errno.ENOSPC, errno.EFBIG, errno.EDQUOT):
                raise CommandError(f"Cannot write {output}: the disk is full "
                                   f"({os.strerror(exc.errno)}); nothing was written.") from None
            raise CommandError(f"Cannot write {output}: {exc.strerror}.") from None
        self.stdout.write(
            f"{'Issued' if created else 'Reused'} dossier {dossier.pk}, version "
            f"{dossier.version} of process {process.pk}: {output}\n"
            f"  PDF SHA-256      {dossier.sha256}\n  content SHA-256  {dossier.content_sha256}"
        )
