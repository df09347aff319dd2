"""Request bodies, read with bounds no client can push past.

DRF's JSONParser lets JSON nest until the decoder overflows the stack (RecursionError: a
500) and refuses an integer of more than 4,300 digits with a parse error that names no
field. BoundedJSONParser is the API's JSON parser (``REST_FRAMEWORK["DEFAULT_PARSER_CLASSES"]``;
views that choose their parsers choose API_PARSERS):

- JSON nested deeper than MAX_JSON_DEPTH is refused before it is decoded, naming the
  top-level key it sits under;
- an integer of more than MAX_INTEGER_DIGITS digits is passed on as its digits (a string),
  so that the field receiving it refuses it by name as an impossible value.

The size of a body is Django's to bound: DRF reads JSON and form bodies through
``request.body``, which refuses one longer than DATA_UPLOAD_MAX_MEMORY_SIZE
(RequestDataTooBig, a 400 from registry.api.errors).
"""
from __future__ import annotations

import codecs
import json
import re
from collections.abc import Mapping
from typing import IO, Any

from django.conf import settings
from rest_framework import exceptions, parsers
from rest_framework.utils.json import strict_constant

# No register record nests deeper than a list of objects inside an object (eyewear
# markings: 3 levels); anything far deeper is not a request anyone means.
MAX_JSON_DEPTH = 20

# A float ends near 1.8e308 and no count in the register comes close: an integer literal
# longer than this is no value a person meant, and Python's int() would refuse it beyond
# 4,300 digits anyway.
MAX_INTEGER_DIGITS = 400

# The JSON that changes nesting depth: keys (a string followed by a colon, whose text tells
# which field the nesting is under), other strings (skipped, since brackets inside them are
# text) and brackets. Possessive quantifiers: a string is matched one way only, so an
# unterminated one costs one pass, never a search.
_JSON_STRUCTURE = re.compile(rb'(?P<key>"(?:[^"\\]++|\\.)*+")\s*+:|"(?:[^"\\]++|\\.)*+"|(?P<bracket>[\[\]{}])',
                             re.DOTALL)


def nesting_problem(body: bytes, *, max_depth: int = MAX_JSON_DEPTH) -> tuple[str | None, str] | None:
    """(top-level key or None, message) when the JSON in ``body`` nests deeper than ``max_depth``.

    Stops at the first bracket past the limit, so a hostile body costs a few dozen steps.
    """
    depth = 0
    top_key: str | None = None
    for token in _JSON_STRUCTURE.finditer(body):
        if token.group("key") is not None:
            if depth == 1:
                top_key = _decoded_key(token.group("key"))
            continue
        bracket = token.group("bracket")
        if bracket is None:
            continue
        if bracket in (b"[", b"{"):
            depth += 1
            if depth > max_depth:
                return top_key, f"nested more than {max_depth} levels deep; no field of this API nests so deep."
        else:
            depth -= 1
    return None


def _decoded_key(token: bytes) -> str:
    try:
        key = json.loads(token)
    except ValueError:
        return token.decode("utf-8", "replace")
    return key if isinstance(key, str) else str(key)


def _integer(digits: str) -> int | str:
    if len(digits.lstrip("-")) > MAX_INTEGER_DIGITS:
        return digits
    return int(digits)


class BoundedJSONParser(parsers.JSONParser):
    """DRF's JSONParser with a bounded depth and bounded integers (see the module docstring)."""

    def parse(self, stream: IO[bytes] | None, media_type: str | None = None,
              parser_context: Mapping[str, Any] | None = None) -> Any:
        body = stream.read() if stream is not None else b""
        too_deep = nesting_problem(body)
        if too_deep is not None:
            key, message = too_deep
            if key is None:
                raise exceptions.ParseError(f"The JSON body is {message}")
            raise exceptions.ValidationError({key: [message]})
        encoding = (parser_context or {}).get("encoding", settings.DEFAULT_CHARSET)
        try:
            text = codecs.decode(body, encoding)
            parse_constant = strict_constant if self.strict else None
            return json.loads(text, parse_constant=parse_constant, parse_int=_integer)
        except ValueError as error:
            raise exceptions.ParseError(f"JSON parse error - {error}") from None


# What every API view accepts, in DRF's order (settings.REST_FRAMEWORK names the same three).
# Form and multipart bodies are Django's QueryDict and MultiPartParser, which bound the
# number of fields and files themselves.
API_PARSERS = [BoundedJSONParser, parsers.FormParser, parsers.MultiPartParser]
