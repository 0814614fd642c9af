"""API tokens for scripts and instruments, kept as digests (django-rest-knox).

POST a username and password to ``/api/v1/token/`` and the answer carries a new token, the
only time it is ever shown: the database keeps its SHA-512 digest, so the admin, a backup or a
leaked database gives no usable token.  Send it as ``Authorization: Token <token>``; the
browser uses its session instead.  A person lists their tokens (by the first characters, the
``id``) at ``/api/v1/tokens/`` and revokes one with DELETE, or the one in use with
``DELETE /api/v1/tokens/current/``.  Changing the password or deactivating the account
revokes all of that person's tokens (``authentication.revoke_tokens_on_credential_change``).
"""

from __future__ import annotations

from django.utils import timezone
from drf_spectacular.extensions import OpenApiAuthenticationExtension
from drf_spectacular.plumbing import build_bearer_security_scheme_object
from drf_spectacular.utils import extend_schema
from knox.models import AuthToken
from rest_framework import (
    exceptions,
    mixins,
    permissions,
    serializers,
    status,
    viewsets,
)
from rest_framework.authtoken.serializers import AuthTokenSerializer
from rest_framework.response import Response
from rest_framework.views import APIView

from inventory.signin import lockout_response

from .authentication import HashedTokenAuthentication, tokens_of
from .parsers import JsonParser


class HashedTokenScheme(OpenApiAuthenticationExtension):
    target_class = HashedTokenAuthentication
    name = "tokenAuth"

    def get_security_definition(self, auto_schema):
        return build_bearer_security_scheme_object(header_name="Authorization",
                                                   token_prefix="Token")


class TokenOut(serializers.Serializer):
    token = serializers.CharField(help_text="Send as 'Authorization: Token <token>'. Shown "
                                            "only now: keep it like a password.")
    id = serializers.CharField(help_text="The token's first characters, to list or revoke it.")
    expires = serializers.DateTimeField(allow_null=True)


class TokenView(APIView):
    """Issue a new token for a username and password (shown once; the database keeps a
    digest).  Each call issues another token; revoke the ones you no longer use."""

    authentication_classes = ()
    permission_classes = ()
    parser_classes = (JsonParser,)
    serializer_class = AuthTokenSerializer

    @extend_schema(request=AuthTokenSerializer, responses={200: TokenOut}, auth=[],
                   operation_id="token_create")
    def post(self, request, *args, **kwargs):
        credentials = AuthTokenSerializer(data=request.data, context={"request": request})
        if not credentials.is_valid():
            # django-axes marks the request of a locked-out name and address (the DRF
            # request here, which its middleware does not see): say so, not "wrong password".
            if getattr(request, "axes_locked_out", False):
                return lockout_response(request._request)
            raise exceptions.ValidationError(credentials.errors)
        user = credentials.validated_data["user"]
        AuthToken.objects.filter(user=user, expiry__lt=timezone.now()).delete()
        stored, token = AuthToken.objects.create(user=user)
        return Response({"token": token, "id": stored.token_key, "expires": stored.expiry})


class TokenRow(serializers.ModelSerializer):
    id = serializers.CharField(source="token_key", read_only=True,
                               help_text="The token's first characters (not usable alone).")
    expires = serializers.DateTimeField(source="expiry", read_only=True, allow_null=True)
    in_use = serializers.SerializerMethodField()

    class Meta:
        model = AuthToken
        fields = ("id", "created", "expires", "in_use")

    def get_in_use(self, stored) -> bool:
        """Whether this request came with this token."""
        return getattr(self.context["request"].auth, "digest", None) == stored.digest


class OwnTokens(mixins.ListModelMixin, mixins.DestroyModelMixin, viewsets.GenericViewSet):
    """The signed-in person's own API tokens: list them, revoke one (``current``: the token
    this request carries)."""

    serializer_class = TokenRow
    permission_classes = (permissions.IsAuthenticated,)
    lookup_field = "token_key"
    lookup_url_kwarg = "id"
    lookup_value_regex = "[0-9a-f]{1,25}|current"
    filter_backends = ()
    ordering = ("-created", "digest")

    def get_queryset(self):
        return tokens_of(self.request.user)

    def get_object(self):
        if self.kwargs["id"] == "current":
            stored = self.request.auth
            if not isinstance(stored, AuthToken):
                raise exceptions.NotFound("This request was not made with a token.")
            return stored
        stored = self.get_queryset().filter(token_key=self.kwargs["id"]).first()
        if stored is None:
            raise exceptions.NotFound(f"You have no token {self.kwargs['id']}.")
        return stored

    @extend_schema(responses={204: None})
    def destroy(self, request, *args, **kwargs):
        self.get_object().delete()
        return Response(status=status.HTTP_204_NO_CONTENT)

