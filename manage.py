#!/usr/bin/env python
"""Exoledger's command-line utility for administrative tasks."""

import os
import sys

from django.conf import settings
from django.core.exceptions import ImproperlyConfigured
from django.core.management import execute_from_command_line
from django.db.utils import OperationalError

from hazards.db import describe


def main() -> None:
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "hazards.settings")
    try:
        execute_from_command_line(sys.argv)
    except ImproperlyConfigured as exc:
        print(f"exoledger: configuration error: {exc}", file=sys.stderr)
        raise SystemExit(2) from None
    except OperationalError as exc:
        # An unreachable database is one clear line, not a traceback.
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        print(
            f"exoledger: cannot use the database {describe(settings.DATABASES['default'])}: "
            f"{reason}",
            file=sys.stderr,
        )
        raise SystemExit(2) from None


if __name__ == "__main__":
    main()
