"""``POST /api/v1/auth/token/``: a field app trades a user name and password for a named device token.

The answer carries the key once, exactly like creating a token with an
existing session or token; the token is logged as issued in the user's
organisations.  Wrong credentials are 401 with the one error body.
"""

from __future__ import annotations

from django.contrib.auth import authenticate
from drf_spectacular.utils import extend_schema
from rest_framework import permissions, serializers, status
from rest_framework.response import Response
from rest_framework.views import APIView

from api.errors import ApiError
from api.middleware import current_request_id
from api.serializers.tenancy import TokenCreated, TokenOut
from projects import people


class TokenObtainInput(serializers.Serializer):
    username = serializers.CharField(max_length=150)
    password = serializers.CharField(max_length=256, style={"input_type": "password"}, trim_whitespace=False)
    name = serializers.CharField(max_length=100, help_text="The device or app, e.g. 'trench tablet 2'.")


class TokenObtainView(APIView):
    authentication_classes: list = []
    permission_classes = [permissions.AllowAny]

    @extend_schema(request=TokenObtainInput, responses={201: TokenCreated}, auth=[])
    def post(self, request):
        data = TokenObtainInput(data=request.data)
        data.is_valid(raise_exception=True)
        values = data.validated_data
        user = authenticate(request._request, username=values["username"], password=values["password"])
        if user is None or not user.is_active:
            raise ApiError(401, "invalid-credentials", "unknown user name or wrong password", field="password")
        token, key = people.issue_token(user, values["name"], request_id=current_request_id())
        body = TokenOut(token).data
        body["key"] = key
        return Response(body, status=status.HTTP_201_CREATED)
