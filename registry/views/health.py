"""/healthz: whether this server can serve the register, for a load balancer or a monitor.

No sign-in and no register data: the answer is a status and one line of text, never cached.
"""
from __future__ import annotations

import logging

from django.db import DatabaseError, connection
from django.db.migrations.executor import MigrationExecutor
from django.http import HttpRequest, HttpResponse
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_safe

logger = logging.getLogger(__name__)


@require_safe
@never_cache
def healthz(request: HttpRequest) -> HttpResponse:
    """200 when the database answers and every migration is applied, 503 otherwise.

    Reading the applied migrations is the database check: a server that cannot reach its
    database, or that runs code whose migrations were not applied yet, is taken out of
    rotation until ``migrate`` has run. Loads the migration files on each call (tens of ms).
    """
    try:
        executor = MigrationExecutor(connection)
        pending = executor.migration_plan(executor.loader.graph.leaf_nodes())
    except DatabaseError as error:
        logger.error("health check failed: the database does not answer: %s", error)
        return _answer(503, "database not answering")
    if pending:
        logger.error("health check failed: %d migrations not applied (first: %s)", len(pending), pending[0][0])
        return _answer(503, "migrations not applied")
    return _answer(200, "ok")


def _answer(status: int, text: str) -> HttpResponse:
    return HttpResponse(f"{text}\n", status=status, content_type="text/plain; charset=utf-8")
