"""Error answers: every failure is JSON {"error": {field, message, ...}} naming the field.

InputError -> 422, LimitExceeded -> 413, pydantic validation -> 422 with the failing field
path (``eigenvalues[3][0]``), unknown job -> 404. Nothing the user sends yields a 500.
"""
from __future__ import annotations

import logging
import re

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from ..errors import InputError, LimitExceeded

log = logging.getLogger("stepfence.api")


def error_body(field: str, message: str, **extra) -> dict:
    """Return the JSON error object every route answers with."""
    out = {"field": field, "message": message, "position": None, "line": None, "column": None,
           "expected": None}
    out.update(extra)
    out.setdefault("detail", f"{field}: {message}")
    return {"error": out}


_FIELD_NAME = re.compile(r"[a-z_][a-z0-9_]*")
_TYPE_TAGS = {"str", "int", "float", "bool", "list", "dict", "tuple", "none"}


def _is_field(part) -> bool:
    # pydantic puts union branch tags (``constrained-str``, ``SchemeSpec``, ``list[...]``) in
    # locations; our field names are lower-case identifiers, so anything else is a tag
    return isinstance(part, int) or (bool(_FIELD_NAME.fullmatch(str(part)))
                                     and str(part) not in _TYPE_TAGS)


def field_path(loc) -> str:
    """Return a request-field path such as ``eigenvalues[3][0]`` from a pydantic location."""
    out = ""
    for p in loc[1:] if loc and loc[0] in ("body", "query", "path", "form") else loc:
        if not _is_field(p):
            continue
        out += f"[{p}]" if isinstance(p, int) else ("." if out else "") + str(p)
    return out or "body"


def _best(errors: list) -> dict:
    """Return the most specific error: the deepest real field path, first among equals."""
    def depth(e):
        return sum(1 for p in e.get("loc", ()) if _is_field(p))
    return max(errors, key=depth) if errors else {"loc": ("body",), "msg": "is not valid"}


async def _input_error(request: Request, exc: InputError) -> JSONResponse:
    status = 413 if isinstance(exc, LimitExceeded) else 422
    return JSONResponse({"error": exc.to_dict()}, status_code=status)


async def _validation_error(request: Request, exc: RequestValidationError) -> JSONResponse:
    errors = exc.errors()
    first = _best(errors)
    loc = tuple(first.get("loc", ("body",)))
    kind = first.get("type", "")
    field = field_path(loc)
    msg = str(first.get("msg", "is not valid"))
    if kind == "json_invalid":
        field = "body"
        ctx = first.get("ctx") or {}
        msg = f"is not valid JSON ({ctx.get('error', 'malformed')})"
    elif kind == "missing":
        msg = "is required"
    elif kind == "extra_forbidden":
        msg = "is not a known field"
    elif kind == "finite_number":
        msg = "must be a finite number (NaN and Infinity are refused)"
    body = error_body(field, msg)
    body["error"]["detail"] = f"{field}: {msg}"
    body["error"]["all"] = [{"field": field_path(e.get("loc", ())), "message": str(e.get("msg"))}
                            for e in errors[:20]]
    return JSONResponse(body, status_code=422)


async def _http_error(request: Request, exc: StarletteHTTPException) -> JSONResponse:
    detail = exc.detail if isinstance(exc.detail, str) else "request refused"
    field = "path" if exc.status_code == 404 else "request"
    return JSONResponse(error_body(field, detail), status_code=exc.status_code,
                        headers=getattr(exc, "headers", None))


async def _unexpected(request: Request, exc: Exception) -> JSONResponse:
    # a bug on our side, not bad input: log it, answer without internals
    log.exception("unexpected error on %s", request.url.path)
    return JSONResponse(error_body("server", "internal error; the input was kept, please report "
                                             "this with the share link"), status_code=500)


def install_error_handlers(app: FastAPI) -> None:
    """Register the handlers above on app."""
    app.add_exception_handler(InputError, _input_error)
    app.add_exception_handler(RequestValidationError, _validation_error)
    app.add_exception_handler(StarletteHTTPException, _http_error)
    app.add_exception_handler(Exception, _unexpected)
