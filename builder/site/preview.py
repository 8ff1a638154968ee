"""``periplus preview``: a local web server for reading a built site, answering missing pages with its 404 page.

``open_server`` checks the site and the port and binds the server; the preview command
(builder.commands) says where it listens and serves until interrupted.  Nothing here prints.
"""

from __future__ import annotations

import functools
import http.server
from pathlib import Path
from typing import Any

from builder.errors import UsageError
from builder.site.render import MARKER

__all__ = ["open_server", "serving_text"]


class _Handler(http.server.SimpleHTTPRequestHandler):
    def log_message(self, format: str, *args: object) -> None:
        pass  # quiet: the address printed at start is what a reader needs

    def send_head(self) -> Any:
        """As a static host: a path that names no file (a NUL byte in it, say) is a bad request, not a crash."""
        try:
            return super().send_head()
        except ValueError:
            self.send_error(400, "Bad request path")
            return None

    def list_directory(self, path: Any) -> None:
        """A folder without an index page is not listed: it is missing, as on a static host."""
        self.send_error(404)

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
    """A server for ``site`` bound to ``host``:``port`` (0 picks a free port), not yet serving.

    The caller serves it (``serve_forever``) and closes it (it is a context manager).
    """
    if not (site / MARKER).is_file():
        raise UsageError(f"{site}: expected a site built by periplus build, got none (run periplus build first)")
    if not 0 <= port <= 65535:
        raise UsageError(f"--port: expected a port from 0 to 65535 (0 picks a free one), got {port}")
    handler = functools.partial(_Handler, directory=str(site))
    try:
        return http.server.ThreadingHTTPServer((host, port), handler)
    except OSError as exc:
        raise UsageError(f"{host}:{port}: cannot serve here ({exc.strerror or exc}); try another --port") from None


def serving_text(site: Path, host: str, server: http.server.ThreadingHTTPServer) -> str:
    """What the preview command says once ``server`` is open: the site and its address, with the port it got."""
    return f"Serving {site} at http://{host}:{server.server_address[1]}/ (Ctrl-C stops)"
