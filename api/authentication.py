"""``Authorization: Token <key>`` with the user's named device tokens."""

from __future__ import annotations

from django.utils import timezone
from drf_spectacular.extensions import OpenApiAuthenticationExtension
from rest_framework import authentication, exceptions

from projects.models import ApiToken


class DeviceTokenAuthentication(authentication.BaseAuthentication):
    keyword = "Token"

    def authenticate(self, request):
        header = authentication.get_authorization_header(request).split()
        if not header or header[0].lower() != self.keyword.lower().encode():
            return None
        if len(header) != 2:
            raise exceptions.AuthenticationFailed("Token header must be 'Token <key>'.")
        try:
            key = header[1].decode()
        except UnicodeError:
            raise exceptions.AuthenticationFailed("Token key is not valid text.") from None
        token = ApiToken.authenticate(key)
        if token is None or not token.user.is_active:
            raise exceptions.AuthenticationFailed("Unknown or revoked token.")
        now = timezone.now()
        if token.last_used_at is None or (now - token.last_used_at).total_seconds() > 60:
            ApiToken.objects.filter(pk=token.pk).update(last_used_at=now)
        return token.user, token

    def authenticate_header(self, request):
        return self.keyword


class DeviceTokenScheme(OpenApiAuthenticationExtension):
    target_class = "api.authentication.DeviceTokenAuthentication"
    name = "deviceToken"

    def get_security_definition(self, auto_schema):
        return {"type": "apiKey", "in": "header", "name": "Authorization", "description": "Token <key>"}
