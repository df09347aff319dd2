"""POST /api/v1/evaluate/: hazard figures for ad-hoc beam parameters, nothing saved."""
from __future__ import annotations

from typing import Any

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiResponse, extend_schema
from rest_framework import serializers
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.assessment import assess, parse_assessment_request
from hazards.errors import InputError
from registry.api.docs import browsable_api_csp
from registry.api.parsers import BoundedJSONParser
from registry.permissions import HasRole
from registry.serializers.evaluate import EvaluationRequestSerializer


@browsable_api_csp
class EvaluateView(APIView):
    """Evaluate beam parameters as `python -m hazards assess --json` does, without saving.

    The answer is that command's JSON object (nohd_m, od_required, en207, the exposure
    basis, the working, warnings, engine_version, ...). Figures support, and never
    replace, the laser safety officer's judgement and the local regulations.
    """

    permission_classes = [HasRole]
    parser_classes = [BoundedJSONParser]

    @extend_schema(
        request=EvaluationRequestSerializer,
        responses={200: OpenApiResponse(response=OpenApiTypes.OBJECT,
                                        description="The JSON of `python -m hazards assess --json`.")},
        summary="Evaluate ad-hoc beam parameters (nothing is saved)",
        tags=["evaluate"],
    )
    def post(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        EvaluationRequestSerializer(data=request.data).is_valid(raise_exception=True)
        try:
            beam, scenario = parse_assessment_request(request.data)
            return Response(assess(beam, scenario).to_dict())
        except InputError as error:
            raise serializers.ValidationError({error.field: [error.message]}) from None
