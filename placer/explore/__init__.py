"""The local interactive page: place roots by hand, watch the parts follow.

``placer explore SPEC`` serves one spec's target on an s-plane in the
browser: drag a pole (or a notch zero) or type a section's f0 and Q, and
the section is placed again by the path ``placer design`` takes, its
parts, schematic and responses redrawn. :mod:`.session` holds the spec
and the cached placements, :mod:`.app` the routes and the request guard,
:mod:`.server` the socket, token and uvicorn; the page itself is
``static/`` (plain JavaScript and SVG, no outside loads).
"""

from .app import create_app
from .server import serve
from .session import Download, EditedTarget, ExploreSession, FieldError, SectionEdit

__all__ = ["create_app", "serve", "ExploreSession", "EditedTarget", "SectionEdit",
           "FieldError", "Download"]
