"""``periplus preview``: serve a built site on localhost for reading."""

from __future__ import annotations

import functools
import http.server
from pathlib import Path

from .errors import UsageError
from .render import MARKER

__all__ = ["serve"]


class _Handler(http.server.SimpleHTTPRequestHandler):
    def log_message(self, format: str, *args: object) -> None:  # noqa: A002 - the base class's name
        pass  # quiet: the address printed at start is what a reader needs


def serve(site: Path, port: int = 8000, host: str = "127.0.0.1") -> None:
    """Serve ``site`` until interrupted; print the address first."""
    if not (site / MARKER).is_file():
        raise UsageError(f"{site}: expected a site built by periplus build, got none (run periplus build first)")
    if not 0 <= port <= 65535:
        raise UsageError(f"--port: expected a port from 0 to 65535 (0 picks a free one), got {port}")
    handler = functools.partial(_Handler, directory=str(site))
    try:
        server = http.server.ThreadingHTTPServer((host, port), handler)
    except OSError as exc:
        raise UsageError(f"{host}:{port}: cannot serve here ({exc.strerror or exc}); try another --port") from None
    with server:
        actual = server.server_address[1]
        print(f"Serving {site} at http://{host}:{actual}/ (Ctrl-C stops)", flush=True)
        server.serve_forever()
