"""The request id on every log line: set by registry.middleware.RequestLogMiddleware for the
length of a request, read by the record factory that RegistryConfig.ready() installs.

A context variable rather than an attribute of the request, so that lines written far from
the request (a service, Django's own "Internal Server Error") carry it too.
"""
from __future__ import annotations

import logging
from contextvars import ContextVar
from typing import Any

# "-" outside a request: management commands, start-up.
REQUEST_ID: ContextVar[str] = ContextVar("request_id", default="-")


def install_record_factory() -> None:
    """Give every log record a ``request_id`` attribute (the LOGGING format prints it); once."""
    previous = logging.getLogRecordFactory()
    if getattr(previous, "adds_request_id", False):
        return

    def factory(*args: Any, **kwargs: Any) -> logging.LogRecord:
        record = previous(*args, **kwargs)
        record.request_id = REQUEST_ID.get()
        return record

    factory.adds_request_id = True  # type: ignore[attr-defined]
    logging.setLogRecordFactory(factory)
