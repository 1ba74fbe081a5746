"""The page: web/ at / and plotly.js from the installed plotly package at /vendor/.

Nothing is fetched from elsewhere: the Content-Security-Policy below only lets the page talk to
its own origin, so even a mistake in the page cannot reach out to the network.
"""
from __future__ import annotations

from fastapi import APIRouter, Depends, FastAPI, HTTPException
from fastapi.responses import FileResponse
from starlette.staticfiles import StaticFiles

from .deps import get_settings
from .settings import Settings

router = APIRouter(tags=["page"])

CSP = ("default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; "
       "img-src 'self' data: blob:; font-src 'self' data:; connect-src 'self'; "
       "worker-src 'self' blob:; object-src 'none'; base-uri 'none'; form-action 'none'; "
       "frame-ancestors 'none'")


@router.get("/vendor/plotly.min.js", include_in_schema=False)
def read_plotly(settings: Settings = Depends(get_settings)):
    """Serve plotly.min.js from the installed plotly package."""
    if not settings.plotly_js.is_file():
        raise HTTPException(404, "plotly.min.js not found in the installed plotly package")
    return FileResponse(settings.plotly_js, media_type="text/javascript",
                        headers={"Cache-Control": "public, max-age=86400"})


class SecurityHeadersMiddleware:
    """Adds CSP, nosniff and no-referrer to every response (pure ASGI)."""

    def __init__(self, app):
        self.app = app

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return

        async def with_headers(msg):
            if msg["type"] == "http.response.start":
                headers = list(msg.get("headers", []))
                headers += [(b"content-security-policy", CSP.encode()),
                            (b"x-content-type-options", b"nosniff"),
                            (b"referrer-policy", b"no-referrer")]
                if scope.get("path", "").endswith((".js", ".css", ".html", "/")) and \
                        not scope.get("path", "").startswith("/vendor/"):
                    headers.append((b"cache-control", b"no-cache"))
                msg = {**msg, "headers": headers}
            await send(msg)

        await self.app(scope, receive, with_headers)


def mount_page(app: FastAPI, settings: Settings) -> None:
    """Mount web/ at / (last, so /api and /vendor win); StaticFiles refuses paths outside it."""
    app.mount("/", StaticFiles(directory=settings.web_dir, html=True, follow_symlink=False),
              name="page")
