"""Tokens for phones: sign in for one, revoke it."""

from __future__ import annotations

from axes.handlers.proxy import AxesProxyHandler
from django.contrib.auth import authenticate
from drf_spectacular.utils import extend_schema
from rest_framework import status
from rest_framework.authtoken.models import Token
from rest_framework.exceptions import PermissionDenied, Throttled, ValidationError
from rest_framework.permissions import AllowAny, IsAuthenticated
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.views import APIView

from fleet.api.serializers import TokenRequestSerializer, TokenSerializer
from fleet.api.throttles import AuthRateThrottle
from fleet.reach import roles_of

from .base import signed_in


class TokenView(APIView):
    """A phone signs in once for a token (``Authorization: Token <key>``), and may revoke
    it. Attempts are rate-limited per address, and a username that failed too often from an
    address is locked out there as on the sign-in pages (django-axes). The office can also
    issue and revoke tokens with ``manage.py api_token``."""

    throttle_classes = [AuthRateThrottle]

    def get_permissions(self) -> list:
        return [AllowAny()] if self.request.method == "POST" else [IsAuthenticated()]

    @extend_schema(request=TokenRequestSerializer, responses={200: TokenSerializer})
    def post(self, request: Request) -> Response:
        body = TokenRequestSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        credentials = {
            "username": body.validated_data["username"],
            "password": body.validated_data["password"],
        }
        if not AxesProxyHandler.is_allowed(request, credentials):
            raise Throttled(
                detail="too many failed sign-ins for this username from this address; "
                "try again later or ask the office to unlock it"
            )
        user = authenticate(request, **credentials)
        if user is None:
            raise ValidationError({"password": ["the username or the password is wrong"]})
        role = roles_of(user).widest
        if role is None:
            raise PermissionDenied("your account has no role in Rimewatch")
        token, _ = Token.objects.get_or_create(user=user)
        return Response({"token": token.key, "username": user.get_username(), "role": role})

    @extend_schema(request=None, responses={204: None})
    def delete(self, request: Request) -> Response:
        Token.objects.filter(user=signed_in(request)).delete()
        return Response(status=status.HTTP_204_NO_CONTENT)
