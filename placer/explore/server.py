"""Serving the explorer: a socket, a token, uvicorn, and the browser.

The server listens on 127.0.0.1 unless told otherwise; any other address
is announced with a warning, because then other machines can reach the
page (the token still keeps out whoever does not have the URL).
"""

from __future__ import annotations

import ipaddress
import secrets
import socket
import sys
import threading
import webbrowser
from dataclasses import dataclass
from typing import TextIO

import uvicorn

from ..errors import SpecError
from ..spec.reader import load_spec
from .app import LOOPBACK_HOSTS, create_app
from .session import ExploreSession

__all__ = ["ServerPlan", "plan_server", "open_socket", "serve"]

_WILDCARDS = ("0.0.0.0", "::", "")


@dataclass(frozen=True)
class ServerPlan:
    """Where the server listens and what requests it accepts."""

    host: str
    token: str
    allowed_hosts: frozenset
    loopback: bool


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def _own_names() -> set:
    """This machine's name and addresses, for a server bound to every address."""
    names = {socket.gethostname().lower()}
    try:
        for info in socket.getaddrinfo(socket.gethostname(), None):
            names.add(str(info[4][0]).lower())
    except OSError:
        pass
    return names


def plan_server(host: str = "127.0.0.1") -> ServerPlan:
    """The token and the Host names a server on `host` accepts.

    Parameters
    ----------
    host : str
        The address to listen on.

    Returns
    -------
    ServerPlan
    """
    allowed = set(LOOPBACK_HOSTS)
    if host in _WILDCARDS:
        allowed |= _own_names()
    else:
        allowed.add(host.lower())
    return ServerPlan(host=host, token=secrets.token_urlsafe(24), allowed_hosts=frozenset(allowed),
                      loopback=_is_loopback(host))


def open_socket(host: str, port: int) -> socket.socket:
    """A listening TCP socket (port 0: a free one).

    Raises
    ------
    SpecError
        When the address cannot be bound (in use, not this machine's).
    """
    if not 0 <= port <= 65535:
        raise SpecError(f"--port {port}: give a port from 0 (any free one) to 65535")
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    sock = socket.socket(family, socket.SOCK_STREAM)
    try:
        sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        sock.bind((host, port))
        sock.listen(64)
    except OSError as error:
        sock.close()
        raise SpecError(f"--host {host} --port {port}: cannot listen there "
                        f"({error.strerror or error})") from None
    return sock


def _url(host: str, port: int, token: str) -> str:
    shown = "127.0.0.1" if host in _WILDCARDS else host
    if ":" in shown:
        shown = f"[{shown}]"
    return f"http://{shown}:{port}/?token={token}"


def serve(spec_path: str, *, host: str = "127.0.0.1", port: int = 0, open_browser: bool = True,
          out: TextIO = sys.stdout, err: TextIO = sys.stderr) -> int:
    """Run the explorer for one spec until interrupted.

    Parameters
    ----------
    spec_path : str
        The spec file; the only file the server reads.
    host : str
        Address to listen on (default 127.0.0.1).
    port : int
        Port (0: a free one).
    open_browser : bool
        Open the page in the default browser.
    out, err : text streams
        Where the address and warnings go.

    Returns
    -------
    int
        Exit status (0).

    Raises
    ------
    SpecError
        A bad spec, or an address that cannot be bound.
    """
    session = ExploreSession(load_spec(spec_path))
    plan = plan_server(host)
    sock = open_socket(host, port)
    url = _url(host, sock.getsockname()[1], plan.token)
    if not plan.loopback:
        print(f"warning: listening on {host}, not 127.0.0.1: other machines that can reach "
              "this one can open the page if they learn its address and token", file=err)
    app = create_app(session, token=plan.token, allowed_hosts=plan.allowed_hosts)
    server = uvicorn.Server(uvicorn.Config(app, log_level="warning", access_log=False,
                                           lifespan="off"))
    print(f"placer explore: {spec_path} at {url}", file=out)
    print("(Ctrl-C stops the server)", file=out, flush=True)
    if open_browser:
        def launch() -> None:
            while not server.started and not server.should_exit:
                threading.Event().wait(0.05)
            if server.started:
                webbrowser.open(url)
        threading.Thread(target=launch, daemon=True).start()
    try:
        server.run(sockets=[sock])
    except KeyboardInterrupt:  # uvicorn passes Ctrl-C on once it has shut down
        pass
    finally:
        sock.close()
    print("placer explore: stopped", file=out)
    return 0
