"""Request-body bound: refuses a body over Settings.max_body_bytes with 413.

A declared Content-Length over the bound is refused before anything is read; a body without one
(chunked) is read here up to the bound and then handed on, so the route never sees more.
"""
from __future__ import annotations

import json


class BodyLimitMiddleware:
    """Pure ASGI middleware: checks Content-Length, then counts streamed bytes."""

    def __init__(self, app, max_bytes: int):
        self.app = app
        self.max_bytes = max_bytes

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        declared = None
        for k, v in scope.get("headers", ()):
            if k == b"content-length":
                try:
                    declared = int(v)
                except ValueError:
                    declared = None
        if declared is not None and declared > self.max_bytes:
            await self._refuse(send, declared)
            return
        if declared is not None or scope.get("method") in ("GET", "HEAD", "DELETE", "OPTIONS"):
            await self.app(scope, self._counting(receive), send)
            return
        # no length given: read the body here, within the bound, then replay it
        chunks, seen = [], 0
        while True:
            msg = await receive()
            if msg["type"] != "http.request":
                break
            seen += len(msg.get("body", b""))
            if seen > self.max_bytes:
                await self._refuse(send, seen)
                return
            chunks.append(msg.get("body", b""))
            if not msg.get("more_body", False):
                break
        body = b"".join(chunks)
        sent = False

        async def replay():
            nonlocal sent
            if not sent:
                sent = True
                return {"type": "http.request", "body": body, "more_body": False}
            return await receive()

        await self.app(scope, replay, send)

    def _counting(self, receive):
        # a client that sends more than it declared is cut off at the bound
        seen = 0
        limit = self.max_bytes

        async def counted():
            nonlocal seen
            msg = await receive()
            if msg["type"] == "http.request":
                seen += len(msg.get("body", b""))
                if seen > limit:
                    return {"type": "http.disconnect"}
            return msg
        return counted

    async def _refuse(self, send, size):
        body = json.dumps({"error": {
            "field": "body", "message": f"request body of {size} bytes is over the limit of "
                                        f"{self.max_bytes} bytes",
            "position": None, "line": None, "column": None, "expected": None,
            "detail": f"body: over the limit of {self.max_bytes} bytes"}}).encode()
        await send({"type": "http.response.start", "status": 413,
                    "headers": [(b"content-type", b"application/json"),
                                (b"content-length", str(len(body)).encode())]})
        await send({"type": "http.response.body", "body": body})
