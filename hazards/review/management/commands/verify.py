"""`manage.py verify`: check the audit chain, every signature and seal, and that no record
changed outside the trail. Names each problem, exits 1 if there is any, prints the head."""

from __future__ import annotations

from django.core.management.base import BaseCommand

from hazards.review.audit import head_hash, verify_all


class Command(BaseCommand):
    help = ("Verify the hash chain of the audit trail, every signature's content hash and seal, "
            "and that every record matches its last audit event; print the chain's head hash.")

    def handle(self, *args, **options):
        problems = verify_all()
        for problem in problems:
            self.stderr.write(f"PROBLEM {problem}")
        self.stdout.write(f"head {head_hash()}")
        if problems:
            self.stderr.write(f"verify: {len(problems)} problem(s) found")
            raise SystemExit(1)
        self.stdout.write("verify: no problems found")
