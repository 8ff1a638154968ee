"""``periplus preview``: serve a built site on localhost for reading."""

from __future__ import annotations

import functools
import http.server
from pathlib import Path

from builder.errors import UsageError
from builder.site.render import MARKER

__all__ = ["open_server"]


class _Handler(http.server.SimpleHTTPRequestHandler):
    def log_message(self, format: str, *args: object) -> None:  # noqa: A002 - the base class's name
        pass  # quiet: the address printed at start is what a reader needs

    def send_error(self, code: int, message: str | None = None, explain: str | None = None) -> None:
        """Answer a missing page with the site's own 404 page, as a static host would."""
        page = Path(self.directory) / "404.html"
        if code != 404 or not page.is_file():
            super().send_error(code, message, explain)
            return
        body = page.read_bytes()
        self.send_response(404, message)
        self.send_header("Content-Type", "text/html; charset=utf-8")
        self.send_header("Content-Length", str(len(body)))
        self.end_headers()
        if self.command != "HEAD":
            self.wfile.write(body)


def open_server(site: Path, port: int = 8000, host: str = "127.0.0.1") -> http.server.ThreadingHTTPServer:
    """A server of ``site`` on host:port, not yet serving (TEMPORARY copy in wt-cmd; the site helper's wins)."""
    if not (site / MARKER).is_file():
        raise UsageError(f"{site}: expected a site built by periplus build, got none (run periplus build first)")
    if not 0 <= port <= 65535:
        raise UsageError(f"--port: expected a port from 0 to 65535 (0 picks a free one), got {port}")
    handler = functools.partial(_Handler, directory=str(site))
    try:
        server = http.server.ThreadingHTTPServer((host, port), handler)
    except OSError as exc:
        raise UsageError(f"{host}:{port}: cannot serve here ({exc.strerror or exc}); try another --port") from None
    return server

