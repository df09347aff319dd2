"""Middleware of the register's own."""
from __future__ import annotations

import logging
import re
import time
import uuid
from collections.abc import Callable

from django.core.exceptions import TooManyFieldsSent
from django.http import HttpRequest, HttpResponse, HttpResponseBadRequest, JsonResponse
from django.urls import Resolver404, resolve
from django.utils.functional import SimpleLazyObject, empty

from registry.log_context import REQUEST_ID

request_logger = logging.getLogger("registry.requests")

# The header a request id comes in and goes back in; a proxy's own id is kept when it is sane.
REQUEST_ID_HEADER = "X-Request-ID"
_SANE_REQUEST_ID = re.compile(r"[A-Za-z0-9._-]{8,64}")


class RequestLogMiddleware:
    """One log line per request, and a request id on every line written while it runs.

    The id is the incoming X-Request-ID when it is 8 to 64 letters, digits, '.', '_' or '-'
    (what proxies and tracers send), otherwise a new random one; it goes back in the
    response's X-Request-ID, so a person reporting an error can quote it and the log line of
    the exception (Django's "Internal Server Error", which carries it too) can be found.
    The line: method, path (no query string, which may hold names searched for), status,
    duration and the acting user: the signed-in username, "anonymous", or "-" when nothing
    in the request asked who it was (looking it up then would cost a query).
    """

    def __init__(self, get_response: Callable[[HttpRequest], HttpResponse]) -> None:
        self.get_response = get_response

    def __call__(self, request: HttpRequest) -> HttpResponse:
        incoming = request.headers.get(REQUEST_ID_HEADER, "")
        request_id = incoming if _SANE_REQUEST_ID.fullmatch(incoming) else uuid.uuid4().hex
        token = REQUEST_ID.set(request_id)
        started = time.perf_counter()
        try:
            response = self.get_response(request)
            response[REQUEST_ID_HEADER] = request_id
            request_logger.info("%s %s %d %.0f ms user=%s", request.method, request.path, response.status_code,
                                (time.perf_counter() - started) * 1000, _acting_user(request))
        finally:
            REQUEST_ID.reset(token)
        return response


def _acting_user(request: HttpRequest) -> str:
    # AuthenticationMiddleware sets a lazy user; DRF replaces it with the one its authentication found.
    user = request.__dict__.get("user")
    if user is None or (isinstance(user, SimpleLazyObject) and user._wrapped is empty):
        return "-"
    return str(user.get_username()) if user.is_authenticated else "anonymous"


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
