"""Middleware of the register's own."""
from __future__ import annotations

from collections.abc import Callable

from django.core.exceptions import TooManyFieldsSent
from django.http import HttpRequest, HttpResponse, HttpResponseBadRequest, JsonResponse
from django.urls import Resolver404, resolve


class QueryFieldLimitMiddleware:
    """A URL with more query parameters than DATA_UPLOAD_MAX_NUMBER_FIELDS gets a 400, every URL alike.

    Django raises TooManyFieldsSent wherever ``request.GET`` is first read. Inside DRF that is
    before the view has chosen a renderer, and the error then ends as a 500; with DEBUG on,
    Django's error page reads ``request.GET`` again and fails itself. Reading it here, before
    any view, answers the same 400 everywhere: JSON in the API's error shape under /api/,
    plain text elsewhere.
    """

    def __init__(self, get_response: Callable[[HttpRequest], HttpResponse]) -> None:
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        try:
            request.GET  # noqa: B018 - parsing the query string is the check
        except TooManyFieldsSent as error:
            if _is_api(request):
                return JsonResponse({"detail": str(error)}, status=400)
            return HttpResponseBadRequest(str(error), content_type="text/plain; charset=utf-8")
        return self.get_response(request)


def _is_api(request: HttpRequest) -> bool:
    try:
        return resolve(request.path_info).namespace == "api"
    except Resolver404:
        return False
