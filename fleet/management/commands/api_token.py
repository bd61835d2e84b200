"""Issue or revoke a user's API token (a technician's phone, an integration)."""

from __future__ import annotations

from typing import Any

from django.contrib.auth import get_user_model
from django.core.management.base import BaseCommand, CommandError, CommandParser
from rest_framework.authtoken.models import Token

from fleet.reach import roles_of


class Command(BaseCommand):
    help = (
        "issue USERNAME: print the user's API token, creating it if needed (--rotate: replace "
        "it); revoke USERNAME: delete it, so the phone must sign in again."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("what", choices=["issue", "revoke"])
        parser.add_argument("username")
        parser.add_argument(
            "--rotate", action="store_true", help="issue: replace an existing token"
        )

    def handle(self, *args: Any, **options: Any) -> None:
        user_model = get_user_model()
        try:
            user = user_model.objects.get(**{user_model.USERNAME_FIELD: options["username"]})
        except user_model.DoesNotExist as exc:
            raise CommandError(f"no user named {options['username']!r}") from exc
        if options["what"] == "revoke":
            deleted, _ = Token.objects.filter(user=user).delete()
            self.stdout.write(f"revoked the token of {user}" if deleted else f"{user} had no token")
            return
        if not user.is_active:
            raise CommandError(f"{user} is not active")
        if not roles_of(user):
            raise CommandError(f"{user} has no role (office, technician or manager)")
        if options["rotate"]:
            Token.objects.filter(user=user).delete()
        token, _ = Token.objects.get_or_create(user=user)
        self.stdout.write(token.key)
