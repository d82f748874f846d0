"""``thermofolio serve``: build, serve the site on 127.0.0.1, rebuild on every change.

The server answers only on the loopback interface, serves only files inside the output
folder (a request that resolves outside it, by ``..`` or by percent-encoding, gets 404),
and while the last build failed it answers every page with the build's errors instead of
the stale page.
"""

from __future__ import annotations

import argparse
import html
import io
import sys
import threading
import time
import urllib.parse
from contextlib import redirect_stderr
from pathlib import Path
from typing import TYPE_CHECKING

from generator.caution import CAUTION

if TYPE_CHECKING:  # http.server is imported when a preview starts, not by every command
    import http.server

POLL_SECONDS = 0.5


def register(sub) -> None:
    p = sub.add_parser("serve", help="build, serve on 127.0.0.1 and rebuild on change",
                       description="Preview the handbook: build, serve it on the loopback "
                       "interface only, and rebuild whenever a source file changes.")
    p.add_argument("sources", nargs="?", default="sources", help="handbook folder")
    p.add_argument("-o", "--output", default="out", help="site folder (default: out)")
    p.add_argument("--port", type=int, default=8765, help="port on 127.0.0.1 (default 8765)")
    p.set_defaults(run=run)


class Preview:
    """The state shared by the watcher and the request handler."""

    def __init__(self, sources: Path, output: Path):
        self.sources, self.output = sources, output
        self.errors: list[str] = []
        self.builds = 0
        self.lock = threading.Lock()

    def build(self) -> bool:
        from generator.commands.build import build_site

        buffer = io.StringIO()
        try:
            with redirect_stderr(buffer):
                code = build_site(self.sources, self.output, quiet=True)
        except Exception as exc:  # the preview must outlive a bug in one build
            buffer.write(f"thermofolio: internal error: {type(exc).__name__}: {exc}\n")
            code = 3
        with self.lock:
            self.builds += 1
            self.errors = [] if code == 0 else (buffer.getvalue().strip().splitlines()
                                                or ["the build failed"])
        return code == 0

    def fingerprint(self) -> tuple:
        items = []
        for p in sorted(self.sources.rglob("*")):
            try:
                st = p.stat()
            except OSError:
                continue
            items.append((str(p), st.st_mtime_ns, st.st_size))
        return tuple(items)

    def error_page(self) -> bytes:
        lines = "\n".join(html.escape(e) for e in self.errors)
        return (
            "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta http-equiv=\"refresh\" content=\"2\">"
            "<title>Build failed — thermofolio preview</title>"
            "<link rel=\"icon\" href=\"data:,\"></head><body>"
            "<h1>The last build failed</h1><p>Fix the sources; this page reloads with the "
            "site once the build succeeds.</p>"
            f"<pre id=\"build-errors\">{lines}</pre><p>{html.escape(CAUTION)}</p></body></html>"
        ).encode()


def resolve_inside(root: Path, url_path: str) -> Path | None:
    """The file a URL path names inside ``root``, or None if it would leave ``root``."""
    path = urllib.parse.unquote(urllib.parse.urlsplit(url_path).path)
    if "\x00" in path:
        return None
    parts = [p for p in path.split("/") if p not in ("", ".")]
    if any(p == ".." or "\\" in p for p in parts):
        return None
    target = root.joinpath(*parts) if parts else root
    try:
        real_root = root.resolve()
        real = target.resolve()
    except (OSError, RuntimeError):
        return None
    if real != real_root and real_root not in real.parents:
        return None
    if real.is_dir():
        real = real / "index.html"
    return real if real.is_file() else None


def make_handler(preview: Preview):
    import http.server

    class Handler(http.server.BaseHTTPRequestHandler):
        server_version = "thermofolio-preview"

        def log_message(self, format: str, *args) -> None:  # noqa: A002
            pass

        def do_GET(self) -> None:  # noqa: N802
            with preview.lock:
                failed = bool(preview.errors)
            target = resolve_inside(preview.output, self.path)
            if failed and (target is None or target.suffix == ".html"):
                self._send(500, "text/html; charset=utf-8", preview.error_page())
                return
            if target is None:
                self._send(404, "text/plain; charset=utf-8", b"not found\n")
                return
            ctype = {".html": "text/html; charset=utf-8", ".css": "text/css",
                     ".js": "text/javascript", ".svg": "image/svg+xml",
                     ".json": "application/json", ".csv": "text/csv; charset=utf-8"
                     }.get(target.suffix, "application/octet-stream")
            self._send(200, ctype, target.read_bytes())

        def _send(self, code: int, ctype: str, body: bytes) -> None:
            self.send_response(code)
            self.send_header("Content-Type", ctype)
            self.send_header("Content-Length", str(len(body)))
            self.send_header("Cache-Control", "no-store")
            self.end_headers()
            self.wfile.write(body)

    return Handler


def start(sources: Path, output: Path, port: int) -> tuple[http.server.HTTPServer, Preview,
                                                           threading.Event]:
    """Build once, start the server and the watcher; returns them (for tests, too)."""
    preview = Preview(sources, output)
    first_seen = preview.fingerprint()  # before building: an edit during the build counts
    preview.build()
    import http.server

    server = http.server.ThreadingHTTPServer(("127.0.0.1", port), make_handler(preview))
    stop = threading.Event()

    def watch() -> None:
        seen = first_seen
        while not stop.wait(POLL_SECONDS):
            now = preview.fingerprint()
            if now != seen:
                seen = now
                preview.build()

    threading.Thread(target=watch, daemon=True).start()
    threading.Thread(target=server.serve_forever, daemon=True).start()
    return server, preview, stop


def run(args: argparse.Namespace) -> int:
    if not 0 <= args.port <= 65535:
        print("thermofolio serve: error: --port must be 0 to 65535", file=sys.stderr)
        return 2
    try:
        server, preview, stop = start(Path(args.sources), Path(args.output), args.port)
    except OSError as exc:
        print(f"thermofolio serve: error: cannot listen on 127.0.0.1:{args.port}: "
              f"{exc.strerror}", file=sys.stderr)
        return 1
    host, port = server.server_address[:2]
    print(f"serving {args.output}/ at http://{host}:{port}/index.html (Ctrl-C stops)",
          file=sys.stderr)
    print(f"CAUTION: {CAUTION}", file=sys.stderr)
    try:
        while True:
            time.sleep(3600)
    except KeyboardInterrupt:
        pass
    finally:
        stop.set()
        server.shutdown()
    return 0
