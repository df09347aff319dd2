"""Token sign-in for scripts and other systems, throttled against password guessing."""
from __future__ import annotations

import hashlib
from typing import Any

from drf_spectacular.utils import extend_schema
from rest_framework import serializers
from rest_framework.authtoken.serializers import AuthTokenSerializer
from rest_framework.authtoken.views import ObtainAuthToken
from rest_framework.request import Request
from rest_framework.throttling import ScopedRateThrottle, SimpleRateThrottle
from rest_framework.views import APIView

from registry.api.docs import browsable_api_csp
from registry.api.parsers import API_PARSERS
from registry.schema import error_response
from registry.signin import attempt_name


class SignInUsernameThrottle(SimpleRateThrottle):
    """Counts attempts per submitted username, so guessing one account's password from many
    addresses is throttled as well as many guesses from one address.

    Keyed on the name as registry.signin counts attempts (trimmed and case-folded); the
    address throttle beside it (DRF's) reads the address as registry.signin.attempt_address.
    """

    scope = "token-sign-in-username"

    def get_cache_key(self, request: Request, view: APIView) -> str | None:
        name = attempt_name(request.data.get("username") if hasattr(request.data, "get") else None)
        if name is None:
            return None
        # Hashed: a username may hold characters that cache backends refuse in keys.
        ident = hashlib.sha256(name.encode()).hexdigest()
        return self.cache_format % {"scope": self.scope, "ident": ident}


class TokenSignInSerializer(AuthTokenSerializer):
    """DRF's sign-in fields, with the username taken as sent: no account name begins or ends
    with blanks, and trimming them quietly would let padded names past the throttle above."""

    username = serializers.CharField(label="Username", write_only=True, trim_whitespace=False)

    def validate_username(self, value: str) -> str:
        if value != value.strip():
            raise serializers.ValidationError("A username has no spaces, tabs or line breaks around it.")
        return value


class TokenAnswerSerializer(serializers.Serializer):  # type: ignore[type-arg]
    token = serializers.CharField(read_only=True, help_text="Send as 'Authorization: Token <token>'.")


@browsable_api_csp
class TokenSignInView(ObtainAuthToken):
    """Exchange a username and password for the account's API token."""

    throttle_classes = [ScopedRateThrottle, SignInUsernameThrottle]
    throttle_scope = "token-sign-in"
    serializer_class = TokenSignInSerializer
    # ObtainAuthToken names DRF's own parsers; anonymous callers get the same bounds as the rest.
    parser_classes = API_PARSERS

    @extend_schema(
        summary="Sign in and get an API token",
        description=(
            "Send the account's username and password; the answer holds the token to send as "
            "'Authorization: Token <key>'. Attempts are limited per address and per username "
            "(429 with Retry-After when exceeded)."
        ),
        tags=["sign-in"],
        request=TokenSignInSerializer,
        responses={200: TokenAnswerSerializer, 429: error_response("429")},
    )
    def post(self, request: Request, *args: Any, **kwargs: Any) -> Any:
        return super().post(request, *args, **kwargs)
