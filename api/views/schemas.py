"""Published document schemas: what a field app or an archive may send and will receive."""

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema
from rest_framework.decorators import api_view, authentication_classes, permission_classes, throttle_classes
from rest_framework.permissions import AllowAny
from rest_framework.response import Response

from chronology.interpretations.content_schema import SCHEMA_VERSION, schema


@extend_schema(
    responses={(200, "application/schema+json"): OpenApiTypes.OBJECT},
    summary="JSON Schema of interpretation content",
    description=f"The content document of an interpretation version (JSON Schema Draft 2020-12, version "
                f"{SCHEMA_VERSION}). Error codes for each rule are in the `x-codes` annotations.",
)
@api_view(["GET"])
@authentication_classes([])
@permission_classes([AllowAny])
@throttle_classes([])
def interpretation_content(request):
    # The schema holds no tenant data, so it is public like the OpenAPI description.
    response = Response(schema(), content_type="application/schema+json")
    response["Cache-Control"] = "public, max-age=3600"
    return response
