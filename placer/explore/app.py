"""The explorer's web app: the page, its files and its JSON API.

Routes (every one needs the session's token, as ``?token=`` or the
``X-Placer-Token`` header):

``GET /``
    The page.
``GET /static/{name}``
    The page's script and style sheet (a fixed list shipped in the package;
    no request names a file).
``GET /api/state``
    The spec's title and sections.
``POST /api/place``
    ``{"client", "seq", "sections": [...]}`` → the placed design, or
    ``{"unreachable": ...}``; bad input → 422 ``{"error", "section", "field"}``.
``POST /api/download/{kind}``
    ``{"sections": [...]}`` → the spec file, design JSON, BOM or report.

The guard in front of them (:class:`RequestGuard`) answers 421 to a Host
header that is not the loopback address or ``localhost`` (DNS rebinding),
403 to a missing or wrong token, 413 to a body over the size limit; every
reply carries a Content-Security-Policy that allows nothing from outside.
"""

from __future__ import annotations

import json
import logging
import re
import secrets
from importlib import resources
from typing import Any, Awaitable, Callable
from urllib.parse import parse_qs

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import JSONResponse, Response
from starlette.routing import Route

from ..errors import PlacerError, SpecError, UnreachableTarget
from .session import DOWNLOADS, ExploreSession, FieldError

__all__ = ["create_app", "RequestGuard", "LOOPBACK_HOSTS", "MAX_BODY_BYTES",
           "CONTENT_SECURITY_POLICY", "TOKEN_HEADER"]

#: Host names a request may be addressed to by default.
LOOPBACK_HOSTS = frozenset({"127.0.0.1", "localhost", "::1"})
#: The largest request body accepted, bytes (a target of 12 sections is ~1 kB).
MAX_BODY_BYTES = 64 * 1024
TOKEN_HEADER = "x-placer-token"
#: Nothing from outside: the page's own script, styles and API, data: images.
CONTENT_SECURITY_POLICY = ("default-src 'none'; script-src 'self'; style-src 'self'; "
                           "img-src 'self' data:; connect-src 'self'; base-uri 'none'; "
                           "form-action 'none'; frame-ancestors 'none'")
_STATIC = {"app.js": "text/javascript; charset=utf-8", "app.css": "text/css; charset=utf-8"}
_CLIENT = re.compile(r"[A-Za-z0-9_-]{1,64}")
_LOG = logging.getLogger("placer.explore")

Scope = dict
Receive = Callable[[], Awaitable[dict]]
Send = Callable[[dict], Awaitable[None]]


def _host_name(value: str) -> str:
    """The name in a Host header, without the port or IPv6 brackets."""
    value = value.strip().lower()
    if value.startswith("["):
        return value[1:value.find("]")] if "]" in value else value
    return value.rsplit(":", 1)[0] if value.count(":") == 1 else value


class RequestGuard:
    """ASGI middleware: Host check, token check, body limit, safety headers.

    Parameters
    ----------
    app : ASGI app
    token : str
        The secret every request must carry.
    allowed_hosts : set of str
        Host names (no port) a request may name.
    max_body : int
        Largest request body, bytes.
    """

    def __init__(self, app: Any, *, token: str, allowed_hosts: frozenset = LOOPBACK_HOSTS,
                 max_body: int = MAX_BODY_BYTES) -> None:
        self.app, self.token, self.max_body = app, token, max_body
        self.allowed_hosts = frozenset(h.lower() for h in allowed_hosts)

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] == "lifespan":
            await self.app(scope, receive, send)
            return
        if scope["type"] != "http":  # no websockets here
            return
        headers = {k.decode("latin-1").lower(): v.decode("latin-1") for k, v in scope["headers"]}
        send = self._with_headers(send)
        if _host_name(headers.get("host", "")) not in self.allowed_hosts:
            await _refuse(send, 421, "this server answers only requests addressed to "
                          "127.0.0.1 or localhost")
            return
        query = parse_qs(scope.get("query_string", b"").decode("latin-1"))
        given = headers.get(TOKEN_HEADER) or (query.get("token") or [""])[0]
        if not secrets.compare_digest(given.encode(), self.token.encode()):
            await _refuse(send, 403, "missing or wrong token: open the address that "
                          "`placer explore` printed")
            return
        declared = headers.get("content-length", "")
        if declared and (not declared.isdigit() or int(declared) > self.max_body):
            await _refuse(send, 413, f"request body over {self.max_body} bytes")
            return
        body = bytearray()
        more = scope["method"] in ("POST", "PUT", "PATCH")
        while more:
            message = await receive()
            if message["type"] == "http.disconnect":
                return
            body += message.get("body", b"")
            if len(body) > self.max_body:
                await _refuse(send, 413, f"request body over {self.max_body} bytes")
                return
            more = message.get("more_body", False)
        sent = False

        async def replay() -> dict:
            nonlocal sent
            if not sent:
                sent = True
                return {"type": "http.request", "body": bytes(body), "more_body": False}
            return await receive()

        await self.app(scope, replay, send)

    def _with_headers(self, send: Send) -> Send:
        async def wrapped(message: dict) -> None:
            if message["type"] == "http.response.start":
                extra = [(b"content-security-policy", CONTENT_SECURITY_POLICY.encode()),
                         (b"x-content-type-options", b"nosniff"),
                         (b"referrer-policy", b"no-referrer"),
                         (b"x-frame-options", b"DENY"),
                         (b"cache-control", b"no-store")]
                message = dict(message)
                message["headers"] = list(message.get("headers", [])) + extra
            await send(message)
        return wrapped


async def _refuse(send: Send, status: int, message: str) -> None:
    body = json.dumps({"error": message}).encode()
    await send({"type": "http.response.start", "status": status,
                "headers": [(b"content-type", b"application/json"),
                            (b"content-length", str(len(body)).encode())]})
    await send({"type": "http.response.body", "body": body})


def _static_files() -> dict:
    folder = resources.files("placer.explore") / "static"
    return {name: (folder / name).read_bytes() for name in list(_STATIC) + ["index.html"]}


def _error(status: int, error: Exception) -> JSONResponse:
    if isinstance(error, FieldError):
        return JSONResponse(error.to_dict(), status_code=status)
    return JSONResponse({"error": str(error), "section": None, "field": None}, status_code=status)


async def _read_json(request: Request) -> Any:
    body = await request.body()

    def refuse(constant: str) -> None:
        raise SpecError(f"the request holds {constant}, which is not a number")

    try:
        return json.loads(body.decode("utf-8"), parse_constant=refuse)
    except SpecError:
        raise
    except (UnicodeDecodeError, ValueError) as error:
        raise SpecError(f"the request is not valid JSON ({error})") from None


def create_app(session: ExploreSession, *, token: str,
               allowed_hosts: frozenset = LOOPBACK_HOSTS,
               max_body: int = MAX_BODY_BYTES) -> RequestGuard:
    """The explorer's ASGI app for one session, behind its guard.

    Parameters
    ----------
    session : ExploreSession
    token : str
        The secret of the start-up URL (``secrets.token_urlsafe``).
    allowed_hosts : set of str
        Host names requests may be addressed to (default: loopback only).
    max_body : int
        Largest request body, bytes.

    Returns
    -------
    RequestGuard
        An ASGI app (Starlette inside).
    """
    files = _static_files()
    index = files["index.html"].decode("utf-8").replace("{{TOKEN}}", token)

    async def page(request: Request) -> Response:
        return Response(index, media_type="text/html; charset=utf-8")

    async def static(request: Request) -> Response:
        name = request.path_params["name"]
        if name not in _STATIC:
            return JSONResponse({"error": f"no file {name!r}"}, status_code=404)
        return Response(files[name], media_type=_STATIC[name])

    async def state(request: Request) -> Response:
        return JSONResponse(session.initial_state())

    async def place(request: Request) -> Response:
        try:
            payload = await _read_json(request)
            client, seq = _sequence(payload)
            edited = session.read_edits(payload)
            if client is not None and seq is not None:   # _sequence gives both or neither
                session.note_request(client, seq)
            reply = await run_in_threadpool(session.place, edited, client=client, seq=seq)
        except SpecError as error:
            return _error(422, error)
        except PlacerError as error:
            return _error(422, error)
        return JSONResponse(reply)

    async def download(request: Request) -> Response:
        kind = request.path_params["kind"]
        if kind not in DOWNLOADS:
            return JSONResponse({"error": f"download must be one of {', '.join(DOWNLOADS)}"},
                                status_code=404)
        try:
            edited = session.read_edits(await _read_json(request))
            file = await run_in_threadpool(session.download, kind, edited)
        except UnreachableTarget as error:
            return JSONResponse({"error": f"cannot reach the target: {error}"}, status_code=422)
        except PlacerError as error:
            return _error(422, error)
        return Response(file.body, media_type=file.media_type, headers={
            "content-disposition": f'attachment; filename="{file.filename}"'})

    async def failure(request: Request, error: Exception) -> Response:
        _LOG.exception("placer explore: %s %s failed", request.method, request.url.path)
        return JSONResponse({"error": f"internal error ({type(error).__name__}); the server "
                             "log has the details"}, status_code=500)

    app = Starlette(routes=[
        Route("/", page, methods=["GET"]),
        Route("/static/{name}", static, methods=["GET"]),
        Route("/api/state", state, methods=["GET"]),
        Route("/api/place", place, methods=["POST"]),
        Route("/api/download/{kind}", download, methods=["POST"]),
    ], exception_handlers={Exception: failure})
    return RequestGuard(app, token=token, allowed_hosts=allowed_hosts, max_body=max_body)


def _sequence(payload: Any) -> tuple[str | None, int | None]:
    """The page's id and request number, when it sends them."""
    if not isinstance(payload, dict):
        return None, None
    client, seq = payload.get("client"), payload.get("seq")
    if client is None and seq is None:
        return None, None
    if not isinstance(client, str) or not _CLIENT.fullmatch(client):
        raise SpecError("client must be 1-64 letters, digits, '-' or '_'")
    if not isinstance(seq, int) or isinstance(seq, bool) or not 0 <= seq < 2 ** 53:
        raise SpecError("seq must be a whole number from 0 to 2**53 - 1")
    return client, seq
