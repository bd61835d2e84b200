"""The API's one request parser: JSON read by orjson, with a size and a nesting limit.

Every body the contract knows is an object a few levels deep (a reading set with its
``units`` object is two). A deeper one is refused before any code walks it, so a body
nested a thousand levels cannot exhaust the interpreter's recursion limit; a body larger
than Django's ``DATA_UPLOAD_MAX_MEMORY_SIZE`` is refused before it is read whole.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import IO, Any

import orjson
from django.conf import settings
from rest_framework import status
from rest_framework.exceptions import APIException, ParseError
from rest_framework.parsers import BaseParser

#: How deep a request body may nest objects and arrays. Ours: the deepest body of the
#: contract is two levels; eight leaves room for clients that wrap, and none for abuse.
MAX_JSON_DEPTH = 8


class BodyTooLarge(APIException):
    status_code = status.HTTP_413_REQUEST_ENTITY_TOO_LARGE
    default_detail = "the request body is too large"
    default_code = "too_large"


def body_too_large() -> BodyTooLarge:
    limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
    return BodyTooLarge(f"the request body is larger than {limit} bytes; send less")


def _depth(value: Any) -> int:
    """The nesting depth of parsed JSON (a scalar is 0), walked without recursion."""
    deepest = 0
    stack: list[tuple[Any, int]] = [(value, 0)]
    while stack:
        item, level = stack.pop()
        if isinstance(item, Mapping):
            children: Any = item.values()
        elif isinstance(item, list):
            children = item
        else:
            continue
        level += 1
        deepest = max(deepest, level)
        if deepest > MAX_JSON_DEPTH:
            break
        stack.extend((child, level) for child in children)
    return deepest


class JSONParser(BaseParser):
    """``application/json`` as UTF-8 (RFC 8259), parsed by orjson: NaN, Infinity and lone
    surrogates are refused as not JSON, and so is a body nested deeper than
    ``MAX_JSON_DEPTH`` or larger than ``DATA_UPLOAD_MAX_MEMORY_SIZE`` (413)."""

    media_type = "application/json"

    def parse(
        self,
        stream: IO[bytes] | None,
        media_type: str | None = None,
        parser_context: Mapping[str, Any] | None = None,
    ) -> Any:
        limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
        raw = stream.read(limit + 1 if limit is not None else -1) if stream else b""
        if limit is not None and len(raw) > limit:
            raise body_too_large()
        try:
            data = orjson.loads(raw)
        except orjson.JSONDecodeError as exc:
            if "depth limit" in str(exc):
                raise _too_deep() from exc
            raise ParseError(f"JSON parse error - {exc}") from exc
        if _depth(data) > MAX_JSON_DEPTH:
            raise _too_deep()
        return data


def _too_deep() -> ParseError:
    return ParseError(
        f"JSON parse error - nested deeper than {MAX_JSON_DEPTH} levels of objects and arrays"
    )
