"""A token for scripts and instruments: POST a username and password, get a token back.

Send it as ``Authorization: Token <token>``; the browser uses its session instead.
"""

from __future__ import annotations

from drf_spectacular.utils import extend_schema
from rest_framework import serializers
from rest_framework.authtoken.serializers import AuthTokenSerializer
from rest_framework.authtoken.views import ObtainAuthToken
from rest_framework.parsers import JSONParser


class TokenOut(serializers.Serializer):
    token = serializers.CharField(help_text="Send as 'Authorization: Token <token>'.")


class TokenView(ObtainAuthToken):
    """Obtain the token of a user (the same token on every call until revoked)."""

    parser_classes = (JSONParser,)

    @extend_schema(request=AuthTokenSerializer, responses={200: TokenOut}, auth=[],
                   operation_id="token_create")
    def post(self, request, *args, **kwargs):
        return super().post(request, *args, **kwargs)
