"""``gravplan serve``: a local web app that re-plans the route at every edit.

The standard library's ``ThreadingHTTPServer`` is enough for one engineer on one
machine.  What keeps it safe:

- it binds to the loopback address only (127.0.0.1) and answers only requests whose
  ``Host`` is that address or ``localhost`` (no DNS rebinding), and POSTs only from
  its own page (``Origin`` checked);
- request bodies are limited to :data:`MAX_BODY` bytes and must be JSON;
- the page never sends a file path: the route file that Save writes is fixed when the
  server starts (the scenario's own), and the previous version is kept as ``.bak``;
- a malformed drawing is a message shown in the page (HTTP 200 with ``ok: false``, or
  400 for a body that is not a JSON object: malformed, nested too deeply, an integer
  too long to convert, or ``null``), never a server error or a dropped connection;
- a backlog of 128 connections and a thread per request, so that a burst of requests
  waits for the session's lock instead of being refused.

Endpoints: ``GET /`` the page, ``GET /api/state`` what is being edited,
``POST /api/plan`` a drawing -> the plan digest (see :mod:`planner.app.session`),
``POST /api/save`` a drawing -> written to the route file.
"""

from __future__ import annotations

import json
import logging
import shutil
import threading
from http import HTTPStatus
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

from ..errors import PlannerError
from ..report.files import write_text
from .draw import lines_geojson, route_drawing, scenario_points
from .session import DrawingError, LiveSession, parse_drawing

log = logging.getLogger(__name__)

#: Largest request body accepted [bytes] (a 20,000-vertex drawing is about 0.6 MB).
MAX_BODY = 2 * 1024 * 1024
LOOPBACK = "127.0.0.1"


def save_target(scenario) -> Path:
    """Where Save writes: the route file itself if it is GeoJSON, else a GeoJSON beside it."""
    p = Path(scenario.route.file)
    return p if p.suffix.lower() in (".geojson", ".json") else p.with_suffix(".geojson")


def save_drawing(drawing, target: Path) -> dict:
    """Check the drawing, keep the current file as ``<name>.bak``, write the new one atomically."""
    lines, _ = parse_drawing(drawing)
    fc = lines_geojson(lines)
    backup = None
    if target.exists():
        backup = target.with_name(target.name + ".bak")
        shutil.copy2(target, backup)
    write_text(target, json.dumps(fc, indent=1) + "\n")
    return {"ok": True, "saved": target.name, "backup": backup.name if backup else None,
            "lines": len(lines)}


class _Handler(BaseHTTPRequestHandler):
    server_version = "gravplan"
    app: "App"

    def log_message(self, fmt, *args):           # quiet by default; -v shows requests
        log.info("%s %s", self.address_string(), fmt % args)

    def _send(self, status: int, body: bytes, ctype: str) -> None:
        self.send_response(status)
        self.send_header("Content-Type", ctype)
        self.send_header("Content-Length", str(len(body)))
        self.send_header("Cache-Control", "no-store")
        self.send_header("X-Content-Type-Options", "nosniff")
        self.send_header("Content-Security-Policy",
                         "default-src 'self' data: blob:; script-src 'unsafe-inline'; "
                         "style-src 'unsafe-inline'; img-src 'self' data: blob:")
        self.end_headers()
        self.wfile.write(body)

    def _json(self, status: int, obj) -> None:
        self._send(status, json.dumps(obj, allow_nan=False).encode(), "application/json")

    def _host_ok(self) -> bool:
        host = (self.headers.get("Host") or "").rsplit(":", 1)[0].strip("[]")
        return host in (LOOPBACK, "localhost")

    def do_GET(self):
        if not self._host_ok():
            return self._json(HTTPStatus.FORBIDDEN, {"ok": False, "error": "wrong host"})
        path = self.path.split("?", 1)[0]
        if path in ("/", "/index.html"):
            return self._send(HTTPStatus.OK, self.app.page.encode(), "text/html; charset=utf-8")
        if path == "/favicon.ico":
            self.send_response(HTTPStatus.NO_CONTENT)
            self.end_headers()
            return None
        if path == "/api/state":
            return self._json(HTTPStatus.OK, {"ok": True,
                                              "scenario": self.app.session.scenario.project.name,
                                              "saves_to": self.app.target.name,
                                              "drawing": self.app.drawing})
        return self._json(HTTPStatus.NOT_FOUND, {"ok": False, "error": f"no such page: {path}"})

    def _body(self):
        """The request's JSON body, or None after answering with the reason."""
        if not self._host_ok():
            self._json(HTTPStatus.FORBIDDEN, {"ok": False, "error": "wrong host"})
            return None
        origin = self.headers.get("Origin")
        if origin is not None and origin.split("//", 1)[-1].rsplit(":", 1)[0] not in (LOOPBACK, "localhost"):
            self._json(HTTPStatus.FORBIDDEN,
                       {"ok": False, "error": "requests must come from the editor page"})
            return None
        if (self.headers.get("Content-Type") or "").split(";")[0].strip() != "application/json":
            self._json(HTTPStatus.UNSUPPORTED_MEDIA_TYPE,
                       {"ok": False, "error": "send the drawing as application/json"})
            return None
        try:
            size = int(self.headers.get("Content-Length") or "")
        except ValueError:
            self._json(HTTPStatus.LENGTH_REQUIRED, {"ok": False, "error": "Content-Length is required"})
            return None
        if size > MAX_BODY or size < 0:
            self.close_connection = True
            self._json(HTTPStatus.REQUEST_ENTITY_TOO_LARGE,
                       {"ok": False, "error": f"the drawing is {size:,} bytes; at most {MAX_BODY:,} "
                                              "are accepted"})
            return None
        raw = self.rfile.read(size)
        try:
            body = json.loads(raw.decode("utf-8"))
        except RecursionError:
            self._json(HTTPStatus.BAD_REQUEST,
                       {"ok": False, "error": "the drawing is nested too deeply to be a drawing"})
            return None
        except ValueError as exc:       # not UTF-8, not JSON, or an integer of 4,300+ digits
            self._json(HTTPStatus.BAD_REQUEST,
                       {"ok": False, "error": f"the drawing is not valid JSON ({exc})"})
            return None
        if not isinstance(body, dict):
            self._json(HTTPStatus.BAD_REQUEST,
                       {"ok": False, "error": "the drawing must be a JSON object, not "
                                              f"{type(body).__name__}"})
            return None
        return body

    def do_POST(self):
        path = self.path.split("?", 1)[0]
        if path not in ("/api/plan", "/api/save"):
            return self._json(HTTPStatus.NOT_FOUND, {"ok": False, "error": f"no such endpoint: {path}"})
        drawing = self._body()
        if drawing is None:
            return
        try:
            if path == "/api/plan":
                return self._json(HTTPStatus.OK, self.app.session.replan(drawing))
            with self.app.save_lock:
                answer = save_drawing(drawing, self.app.target)
                self.app.drawing = drawing
            return self._json(HTTPStatus.OK, answer)
        except (DrawingError, PlannerError) as exc:
            return self._json(HTTPStatus.OK, {"ok": False, "error": str(exc)})
        except OSError as exc:
            return self._json(HTTPStatus.OK,
                              {"ok": False, "error": f"could not write {self.app.target.name}: {exc}"})
        except Exception as exc:                  # a bug: say so in the page, log the trace
            log.exception("internal error")
            return self._json(HTTPStatus.INTERNAL_SERVER_ERROR,
                              {"ok": False, "error": f"internal error in gravplan ({type(exc).__name__}); "
                               "please report it with the drawing"})


class _Server(ThreadingHTTPServer):
    """One thread per request, and a listen backlog for a burst of them.

    The standard library's backlog of 5 resets connections when a page (or a test)
    sends tens of plan requests at once; re-plans queue on the session's lock instead.
    """

    daemon_threads = True
    request_queue_size = 128


class App:
    """The server's state: the session, the page, the file Save writes."""

    def __init__(self, scenario, *, port: int = 8765):
        from .page import build_page, terrain_layers

        self.session = LiveSession(scenario)
        self.target = save_target(scenario)
        self.drawing = route_drawing(scenario)
        self.save_lock = threading.Lock()
        markers = [{"role": f["properties"]["role"], "name": f["properties"]["name"],
                    "ll": f["geometry"]["coordinates"][::-1]}
                   for f in scenario_points(scenario, self.drawing)]
        self.page = build_page(mode="live", title=scenario.project.name,
                               terrain=terrain_layers(self.session.dem), drawing=self.drawing,
                               markers=markers)
        handler = type("Handler", (_Handler,), {"app": self})
        self.httpd = _Server((LOOPBACK, port), handler)

    @property
    def url(self) -> str:
        """The editor page's address on the loopback interface."""
        return f"http://{LOOPBACK}:{self.httpd.server_address[1]}/"

    def serve_forever(self) -> None:
        """Answer requests until :meth:`shutdown`, then close the server and the session."""
        try:
            self.httpd.serve_forever()
        finally:
            self.httpd.server_close()
            self.session.close()

    def shutdown(self) -> None:
        """Stop :meth:`serve_forever` (from another thread)."""
        self.httpd.shutdown()
