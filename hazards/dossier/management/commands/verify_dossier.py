"""Say whether a PDF is an unaltered dossier of this system, and which revision it shows."""

from __future__ import annotations

import json
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from hazards.dossier.seal import verify_pdf


class Command(BaseCommand):
    help = "Verify a dossier PDF against its seal and this database (exit status 1 if not valid)."

    def add_arguments(self, parser):
        parser.add_argument("file")
        parser.add_argument("--json", action="store_true", help="Print the result as JSON.")

    def handle(self, *args, file, json: bool = False, **options):
        path = Path(file)
        if not path.is_file():
            raise CommandError(f"No file {file}.")
        result = verify_pdf(path.read_bytes())
        if json:
            self.stdout.write(_json(result.to_dict()))
        else:
            self.stdout.write(("VALID: " if result.valid else "NOT VALID: ") + (
                f"dossier {result.dossier_id}, version {result.version} of process "
                f"{result.process_id} ({result.process}), {result.revision}"
                if result.is_dossier else "not an Exoledger dossier"))
            for label, ok in (("seal", result.seal_valid),
                              ("attachments as sealed", result.attachments_match_seal),
                              ("file as issued", result.file_unaltered),
                              ("data as in the database", result.data_match_database)):
                self.stdout.write(f"  {'ok ' if ok else 'NO '} {label}")
            if result.revision_current is not None:
                self.stdout.write(f"  {'ok ' if result.revision_current else '-- '} still the "
                                  "current state of the process")
            for problem in result.problems:
                self.stdout.write(f"  - {problem}")
        if not result.valid:
            raise SystemExit(1)


def _json(data) -> str:
    return json.dumps(data, indent=2, sort_keys=True)
