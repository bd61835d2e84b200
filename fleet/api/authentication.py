"""Token authentication that reads the token's user and the user's role groups in one
statement.

Every API request authenticates, and every one then needs the caller's role (what they may
reach). DRF's ``TokenAuthentication`` fetches the token with its user and ``role_of``
would then read the groups: two statements, each compiled by the ORM anew. This asks both
in one statement written once (``fleet.rows``) and leaves the role on the user for
``role_of``. A revoked token or a changed group takes effect on the next request, as before.
"""

from __future__ import annotations

from functools import cache

from django.contrib.auth.models import Group, User
from django.db import connection
from django.utils.translation import gettext_lazy as _
from rest_framework.authentication import TokenAuthentication
from rest_framework.authtoken.models import Token
from rest_framework.exceptions import AuthenticationFailed

from fleet.rows import ModelColumns, column, split, table

from .permissions import ROLE_ORDER, remember_role

_USER = ModelColumns(User, "u")


@cache
def _statement() -> str:
    """The user of the token, once per role group they are in (once with none if none)."""
    member = User.groups.through
    user_id, group_id = column(User, "id", "u"), column(Group, "id", "g")
    roles = ", ".join(["%s"] * len(ROLE_ORDER))
    return (
        f"SELECT {_USER.sql}, {column(Group, 'name', 'g')} "
        f"FROM {table(Token, 't')} JOIN {table(User, 'u')} "
        f"ON {user_id} = {column(Token, 'user', 't')} "
        f"LEFT JOIN {table(member, 'm')} ON {column(member, 'user', 'm')} = {user_id} "
        f"LEFT JOIN {table(Group, 'g')} ON {group_id} = {column(member, 'group', 'm')} "
        f"AND {column(Group, 'name', 'g')} IN ({roles}) "
        f"WHERE {column(Token, 'key', 't')} = %s"
    )


class RoleTokenAuthentication(TokenAuthentication):
    """``Authorization: Token <key>``, as DRF's, with the role read alongside. The request's
    ``auth`` is the token's key and user (its creation time is not read)."""

    def authenticate_credentials(self, key: str) -> tuple[User, Token]:
        with connection.cursor() as cursor:
            cursor.execute(_statement(), [*ROLE_ORDER, key])
            rows = cursor.fetchall()
        if not rows:
            raise AuthenticationFailed(_("Invalid token."))
        (user,) = split(rows[0], _USER)
        if not user.is_active:
            raise AuthenticationFailed(_("User inactive or deleted."))
        remember_role(user, {row[-1] for row in rows})
        return user, Token(key=key, user=user)
