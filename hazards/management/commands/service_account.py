"""Service accounts of other systems and their API tokens.

    manage.py service_account create lims-bridge --description "Lab data bridge"
    manage.py service_account issue lims-bridge --name "prod" --ttl-hours 720
    manage.py service_account revoke lims-bridge --prefix AbCdEf12   (or --all)
    manage.py service_account list

A service account is a user without a usable password (so it can never sign, which needs
the person's password) with a `ServiceAccount` row; `create` gives it the view, add,
change and delete permissions on the data records (`--read-only`: view only). A token is
printed once, when issued; the database keeps only its SHA-256.
"""

from __future__ import annotations

from datetime import timedelta

from django.contrib.auth import get_user_model
from django.contrib.auth.models import Permission
from django.core.management.base import BaseCommand, CommandError
from django.db import transaction
from django.utils import timezone

from hazards.api.auth import issue_token
from hazards.models import ApiToken, ServiceAccount

DATA_MODELS = ("site", "process", "reactionstep", "calorimetryrun", "calorimetryseries",
               "decompositiontest", "decompositionpeak", "solvent", "vessel")


def data_permissions(*, read_only: bool):
    actions = ("view",) if read_only else ("view", "add", "change", "delete")
    codenames = [f"{a}_{m}" for a in actions for m in DATA_MODELS]
    return Permission.objects.filter(content_type__app_label="hazards", codename__in=codenames)


def service_account_create(*, username: str, description: str = "", read_only: bool = False):
    User = get_user_model()
    with transaction.atomic():
        user = User.objects.filter(username=username).first()
        if user is not None and not ServiceAccount.objects.filter(user=user).exists():
            raise CommandError(f"{username!r} is a person's account, not a service account.")
        if user is None:
            user = User(username=username, is_active=True)
            user.set_unusable_password()
            user.save()
        account, _ = ServiceAccount.objects.update_or_create(
            user=user, defaults={"description": description})
        user.user_permissions.add(*data_permissions(read_only=read_only))
    return account


def _account(username: str) -> ServiceAccount:
    account = ServiceAccount.objects.select_related("user").filter(
        user__username=username).first()
    if account is None:
        raise CommandError(f"No service account {username!r}.")
    return account


class Command(BaseCommand):
    help = "Create service accounts of other systems; issue, revoke and list their API tokens."

    def add_arguments(self, parser):
        sub = parser.add_subparsers(dest="action", required=True)
        create = sub.add_parser("create", help="create (or update) a service account")
        create.add_argument("username")
        create.add_argument("--description", default="")
        create.add_argument("--read-only", action="store_true",
                            help="view permissions only (default: read and write data)")
        create.add_argument("--issue", action="store_true", help="also issue a first token")
        for p in (create, sub.add_parser("issue", help="issue a new token (printed once)")):
            if p is not create:
                p.add_argument("username")
            p.add_argument("--name", default="", help="what the token is for")
            p.add_argument("--ttl-hours", type=int, default=None,
                           help="life of the token (default EXOLEDGER_API_TOKEN_TTL_HOURS)")
        revoke = sub.add_parser("revoke", help="revoke a token by its prefix, or all")
        revoke.add_argument("username")
        group = revoke.add_mutually_exclusive_group(required=True)
        group.add_argument("--prefix", help="the first 8 characters of the token")
        group.add_argument("--all", action="store_true")
        sub.add_parser("list", help="list service accounts and their tokens")

    def handle(self, *args, **options):
        getattr(self, f"_{options['action']}")(options)

    def _issue_for(self, account, options) -> None:
        ttl = options.get("ttl_hours")
        if ttl is not None and ttl < 1:
            raise CommandError("--ttl-hours must be at least 1.")
        raw = issue_token(user=account.user, name=options.get("name") or "service account",
                          ttl=timedelta(hours=ttl) if ttl else None)
        self.stdout.write(f"token for {account.user.username} (shown once, keep it secret):")
        self.stdout.write(raw)

    def _create(self, options):
        account = service_account_create(username=options["username"],
                                         description=options["description"],
                                         read_only=options["read_only"])
        self.stdout.write(f"service account {account.user.username} ready "
                          f"({'read only' if options['read_only'] else 'read and write'})")
        if options["issue"]:
            self._issue_for(account, options)

    def _issue(self, options):
        self._issue_for(_account(options["username"]), options)

    def _revoke(self, options):
        account = _account(options["username"])
        tokens = ApiToken.objects.filter(user=account.user, revoked_at__isnull=True)
        if not options["all"]:
            tokens = tokens.filter(prefix=options["prefix"])
        count = tokens.update(revoked_at=timezone.now())
        if not count:
            raise CommandError("No active token matched.")
        self.stdout.write(f"revoked {count} token(s) of {account.user.username}")

    def _list(self, options):
        now = timezone.now()
        for account in ServiceAccount.objects.select_related("user").order_by("user__username"):
            self.stdout.write(f"{account.user.username}: {account.description}")
            for token in ApiToken.objects.filter(user=account.user).order_by("created_at"):
                state = ("revoked" if token.revoked_at else
                         "expired" if token.expires_at <= now else "active")
                self.stdout.write(f"  {token.prefix}… {state} until {token.expires_at:%Y-%m-%d} "
                                  f"{token.name}")
