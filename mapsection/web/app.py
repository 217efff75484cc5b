"""The section page's web application (Starlette), served by ``mapsection view``.

Routes (see docs/view.md):

* ``GET /`` the page; ``GET /static/...`` its own script, style and vendored map library;
* ``GET /api/project``; ``GET /api/map/units``, ``/api/map/faults``, ``/api/map/attitudes``
  (GeoJSON, EPSG:4326); ``GET /api/map/hillshade.png`` (its bounds in the
  ``X-Bounds`` header and in ``/api/project``);
* ``POST /api/section``, ``POST /api/save``, ``POST /api/build``, ``GET /api/report``.

Security: every request must name the loopback host in its Host header (a page
of another site that rebinds its name to 127.0.0.1 is refused), and every request
but the static files must carry the server's random token as the ``X-Token``
header or the ``token`` query parameter. The static files are served from the
package's own folder only (Starlette refuses paths that leave it).
"""

from __future__ import annotations

import hmac
import json
from pathlib import Path
from typing import Any

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import FileResponse, JSONResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from ..errors import MapsectionError
from .api import ViewState
from .payload import RequestError

STATIC = Path(__file__).resolve().parent / "static"
LOOPBACK = frozenset({"127.0.0.1", "localhost"})
MAX_BODY = 2_000_000  # bytes: a request body larger than this is refused


def _error(message: str, status: int) -> JSONResponse:
    return JSONResponse({"error": message}, status_code=status)


def _host_name(host: str) -> str:
    host = host.strip().lower()
    if host.startswith("["):
        return host[1:host.find("]")] if "]" in host else host
    return host.rsplit(":", 1)[0] if ":" in host else host


class GuardMiddleware:
    """Refuse requests whose Host is not loopback, and API requests without the token."""

    def __init__(self, app, token: str) -> None:
        self.app = app
        self.token = token.encode()

    async def __call__(self, scope, receive, send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        headers = {k.decode("latin-1").lower(): v.decode("latin-1")
                   for k, v in scope.get("headers") or []}
        host = _host_name(headers.get("host", ""))
        if host not in LOOPBACK:
            await _error(f"host {headers.get('host', '')!r} refused: this server answers "
                         "only to 127.0.0.1 and localhost", 403)(scope, receive, send)
            return
        path = scope.get("path", "")
        if not path.startswith("/static/"):
            given = headers.get("x-token", "")
            if not given:
                from urllib.parse import parse_qs

                qs = parse_qs(scope.get("query_string", b"").decode("latin-1"))
                given = (qs.get("token") or [""])[0]
            if not hmac.compare_digest(given.encode(), self.token):
                await _error("missing or wrong token: open the address that 'mapsection view' "
                             "printed (it ends in ?token=...)", 403)(scope, receive, send)
                return
        await self.app(scope, receive, send)


async def _json_body(request: Request) -> Any:
    body = await request.body()
    if len(body) > MAX_BODY:
        raise RequestError(f"request body: larger than {MAX_BODY} bytes", 413)
    try:
        return json.loads(body)
    except (ValueError, UnicodeDecodeError) as exc:
        raise RequestError(f"request body: not valid JSON ({exc})"[:300]) from None


# --- endpoints: each reads the served project from the app's state -------------------------
def _state(request: Request) -> ViewState:
    return request.app.state.view


async def _page(request: Request) -> Response:
    return FileResponse(STATIC / "index.html", headers={"Cache-Control": "no-store"})


async def _project(request: Request) -> Response:
    return JSONResponse(await run_in_threadpool(_state(request).project_info))


def _geojson(method: str):
    """An endpoint answering the GeoJSON bytes of ViewState's ``method``."""
    async def endpoint(request: Request) -> Response:
        body = await run_in_threadpool(getattr(_state(request), method))
        return Response(body, media_type="application/geo+json")
    return endpoint


async def _hillshade(request: Request) -> Response:
    png, bounds = await run_in_threadpool(_state(request).hillshade)
    return Response(png, media_type="image/png",
                    headers={"X-Bounds": json.dumps(bounds),
                             "Cache-Control": "private, max-age=3600"})


def _post(method: str):
    """An endpoint answering ViewState's ``method`` of the request's JSON body."""
    async def endpoint(request: Request) -> Response:
        payload = await _json_body(request)
        return JSONResponse(await run_in_threadpool(getattr(_state(request), method), payload))
    return endpoint


async def _report(request: Request) -> Response:
    name = request.query_params.get("section", "")
    path = _state(request).reports.get(name)
    if path is None or not path.is_file():
        return _error(f"section {name!r}: no report built from this page yet", 404)
    return FileResponse(path, media_type="text/html")


# --- errors: one JSON message each -------------------------------------------------------
async def _on_request_error(request: Request, exc: RequestError) -> Response:
    return _error(str(exc), exc.status)


async def _on_input_error(request: Request, exc: MapsectionError) -> Response:
    return _error(str(exc), 422)


async def _on_other(request: Request, exc: Exception) -> Response:
    first = str(exc).splitlines()[0] if str(exc) else ""
    return _error(f"internal error: {type(exc).__name__}: {first}", 500)


def create_app(state: ViewState, token: str) -> Starlette:
    """The application serving ``state``; requests must carry ``token``."""
    routes = [
        Route("/", _page),
        Route("/api/project", _project),
        Route("/api/map/units", _geojson("units_geojson")),
        Route("/api/map/faults", _geojson("faults_geojson")),
        Route("/api/map/attitudes", _geojson("attitudes_geojson")),
        Route("/api/map/hillshade.png", _hillshade),
        Route("/api/section", _post("section"), methods=["POST"]),
        Route("/api/save", _post("save"), methods=["POST"]),
        Route("/api/build", _post("build"), methods=["POST"]),
        Route("/api/report", _report),
        Mount("/static", StaticFiles(directory=STATIC), name="static"),
    ]
    app = Starlette(routes=routes, exception_handlers={
        RequestError: _on_request_error, MapsectionError: _on_input_error,
        Exception: _on_other})
    app.state.view = state
    # Outermost: the guard sees every request first, errors included.
    return GuardMiddleware(app, token)


class BackgroundServer:
    """The app served by uvicorn in a thread on a free loopback port (tests, benchmarks).

    >>> # server = BackgroundServer(state); server.url ... server.stop()
    """

    def __init__(self, state: ViewState, token: str | None = None) -> None:
        import secrets
        import socket
        import threading
        import time

        import uvicorn

        self.token = token or secrets.token_urlsafe(24)
        # proto=IPPROTO_TCP: asyncio sets TCP_NODELAY only on such sockets; without it a
        # response written in two pieces waits ~40 ms for the client's delayed ACK.
        sock = socket.socket(socket.AF_INET, socket.SOCK_STREAM, socket.IPPROTO_TCP)
        sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        sock.bind(("127.0.0.1", 0))
        self.port = int(sock.getsockname()[1])
        config = uvicorn.Config(create_app(state, self.token), log_level="warning",
                                access_log=False, lifespan="off")
        self._server = uvicorn.Server(config)
        self._thread = threading.Thread(target=self._server.run, kwargs={"sockets": [sock]},
                                        daemon=True)
        self._sock = sock
        self._thread.start()
        t0 = time.monotonic()
        while not self._server.started:
            if not self._thread.is_alive() or time.monotonic() - t0 > 30:
                raise RuntimeError("the background server did not start")
            time.sleep(0.02)

    @property
    def base(self) -> str:
        return f"http://127.0.0.1:{self.port}"

    @property
    def url(self) -> str:
        return f"{self.base}/?token={self.token}"

    def stop(self) -> None:
        self._server.should_exit = True
        self._thread.join(10)
        self._sock.close()
