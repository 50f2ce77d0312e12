"""The review page's local web server (Flask on Werkzeug's threaded server).

It listens on 127.0.0.1 only, on a free port, and answers only requests that carry the run's
random token (``?token=`` or the ``X-Tracer-Token`` header) and name this host: anything else is
403. It serves its own page and assets and the photos it was given, by their number in the
list, never by a path from the request; it writes only the sidecars and outputs of those photos
(:meth:`ReviewSession.save`). Request bodies are limited in size (413), malformed requests get a
400 with a message, and no answer carries a traceback.

Nothing here prints; :func:`serve` returns why it stopped.
"""

from __future__ import annotations

import hmac
import logging
import secrets
import threading
import time
from dataclasses import dataclass
from importlib import resources
from typing import Any, Callable, Sequence

from ..errors import InputError, TracerError
from .session import ReviewSession

__all__ = ["make_app", "ReviewServer", "start_server", "MAX_BODY", "IDLE_SECONDS", "ASSETS"]

#: The largest request body accepted [bytes] (a hand-edited boundary of a few thousand vertices).
MAX_BODY = 2 * 1024 * 1024
#: The server stops after this long without a request [s].
IDLE_SECONDS = 30 * 60
#: The page's files, served by these names only.
ASSETS = {"review.js": "text/javascript", "review.css": "text/css"}


def make_app(sessions: Sequence[ReviewSession], token: str, *, port_of: Callable[[], int] = lambda: 0,
             touched: Callable[[], None] = lambda: None, title: str = "tracer review"):
    """The Flask application of the page for `sessions`, guarded by `token`."""
    from flask import Flask, Response, jsonify, request
    from werkzeug.exceptions import HTTPException

    app = Flask("tracer.review", static_folder=None, template_folder=None)
    app.config["MAX_CONTENT_LENGTH"] = MAX_BODY
    app.json.sort_keys = False

    @app.before_request
    def guard() -> Any:
        touched()
        host = (request.host or "").lower()
        port = port_of()
        if host not in (f"127.0.0.1:{port}", f"localhost:{port}"):
            return _error(403, "this page answers requests to its own address only")
        given = request.args.get("token") or request.headers.get("X-Tracer-Token") or ""
        if not hmac.compare_digest(given.encode(), token.encode()):
            return _error(403, "missing or wrong token: open the address tracer review printed")
        raw = request.environ.get("RAW_URI") or request.environ.get("REQUEST_URI") or request.full_path
        path = raw.split("?", 1)[0]
        if ".." in request.path or "\\" in path or "%" in path or "//" in path:
            return _error(400, "this page serves no such path")
        return None

    def session(i: int) -> ReviewSession:
        if not 0 <= i < len(sessions):
            raise _NotFound(f"no photo number {i}; this review has {len(sessions)}")
        return sessions[i]

    def body(flag: str) -> tuple[dict[str, Any], bool]:
        """The request's JSON object: its ``state``, and `flag` (true or false, default false)."""
        doc = request.get_json(silent=True)
        if not isinstance(doc, dict):
            raise InputError("the request body must be a JSON object")
        value = doc.get(flag, False)
        if not isinstance(value, bool):
            raise InputError(f"{flag} must be true or false")
        return doc.get("state", {}), value

    @app.get("/")
    def page() -> Response:
        html = resources.files("tracer.review").joinpath("static/index.html").read_text(encoding="utf-8")
        from html import escape

        html = html.replace("{{title}}", escape(title)).replace("{{token}}", escape(token))
        r = Response(html, mimetype="text/html")
        return _no_store(r)

    @app.get("/assets/<name>")
    def asset(name: str) -> Response:
        if name not in ASSETS:
            raise _NotFound("no such asset")
        data = resources.files("tracer.review").joinpath(f"static/{name}").read_bytes()
        return _no_store(Response(data, mimetype=ASSETS[name]))

    @app.get("/api/photos")
    def photos() -> Response:
        return jsonify([{"index": i, "name": s.name, "file": s.path.name, "note": s.note}
                        for i, s in enumerate(sessions)])

    @app.get("/api/photos/<int:i>")
    def describe(i: int) -> Response:
        return jsonify(session(i).describe())

    @app.get("/api/photos/<int:i>/view.jpg")
    def view(i: int) -> Response:
        return _no_store(Response(session(i).view_jpeg(), mimetype="image/jpeg"))

    @app.get("/api/photos/<int:i>/crop.jpg")
    def crop(i: int) -> Response:
        try:
            box = tuple(float(request.args[k]) for k in ("x0", "y0", "x1", "y1"))
            side = int(request.args.get("side", "1024"))
        except (KeyError, ValueError):
            raise InputError("a crop needs x0, y0, x1, y1 (pixels) and side (a whole number)") from None
        return _no_store(Response(session(i).crop_jpeg(box, side), mimetype="image/jpeg"))

    @app.post("/api/photos/<int:i>/measure")
    def measure(i: int) -> Response:
        state, full = body("full")
        return jsonify(session(i).measure(state, full=full))

    @app.post("/api/photos/<int:i>/save")
    def save(i: int) -> Response:
        state, force = body("force")
        answer = session(i).save(state, force=force)
        return jsonify(answer), (409 if answer.get("conflict") else 200)

    @app.errorhandler(_NotFound)
    def not_found(e: _NotFound) -> Response:
        return _error(404, str(e))

    @app.errorhandler(TracerError)
    def tracer_error(e: TracerError) -> Response:
        return _error(400 if isinstance(e, InputError) else 422, str(e))

    @app.errorhandler(HTTPException)
    def http_error(e: HTTPException) -> Response:
        return _error(e.code or 400, e.description or e.name)

    @app.errorhandler(Exception)
    def internal(e: Exception) -> Response:          # never a traceback on the page
        return _error(500, f"internal error: {type(e).__name__}: {e}")

    return app


class _NotFound(Exception):
    pass


def _error(code: int, message: str):
    from flask import jsonify

    r = jsonify({"ok": False, "error": message})
    r.status_code = code
    return r


def _no_store(r):
    r.headers["Cache-Control"] = "no-store"
    return r


@dataclass
class ReviewServer:
    """A running review server: its address, and how to stop it."""

    url: str
    port: int
    token: str
    _server: Any
    _thread: threading.Thread | None = None
    _last: list | None = None
    stopped_by: str = ""

    def serve(self, idle: float = IDLE_SECONDS) -> str:
        """Serve until stopped (:meth:`stop`, Ctrl-C) or idle for `idle` seconds; returns why it
        stopped: ``"idle"``, ``"stopped"`` or ``"interrupted"``."""
        watcher = threading.Thread(target=self._watch, args=(idle,), daemon=True)
        watcher.start()
        try:
            self._server.serve_forever(poll_interval=0.2)
        except KeyboardInterrupt:
            self.stopped_by = "interrupted"
        finally:
            self._server.server_close()
        return self.stopped_by or "stopped"

    def start(self) -> "ReviewServer":
        """Serve in a background thread (tests, and callers that do other work)."""
        self._thread = threading.Thread(target=self.serve, daemon=True)
        self._thread.start()
        return self

    def stop(self) -> None:
        self.stopped_by = self.stopped_by or "stopped"
        self._server.shutdown()
        if self._thread is not None:
            self._thread.join(timeout=10)

    def _watch(self, idle: float) -> None:
        while not self.stopped_by:
            time.sleep(min(1.0, idle / 4))
            if time.monotonic() - self._last[0] > idle and not self.stopped_by:
                self.stopped_by = "idle"
                self._server.shutdown()
                return


def start_server(sessions: Sequence[ReviewSession], *, port: int = 0, token: str | None = None,
                 title: str = "tracer review") -> ReviewServer:
    """Bind the review page of `sessions` to 127.0.0.1 (`port` 0: a free one); not yet serving.

    Raises
    ------
    InputError
        The port is taken.
    """
    from werkzeug.serving import make_server

    logging.getLogger("werkzeug").setLevel(logging.ERROR)     # no request log on the terminal
    token = token or secrets.token_urlsafe(24)
    last = [time.monotonic()]
    bound = [0]

    def touched() -> None:
        last[0] = time.monotonic()

    app = make_app(sessions, token, port_of=lambda: bound[0], touched=touched, title=title)
    try:
        server = make_server("127.0.0.1", port, app, threaded=True)
    except OSError as e:
        raise InputError(f"port {port}: cannot listen there ({e.strerror}); leave --port out to take a free one") \
            from None
    bound[0] = server.server_port
    url = f"http://127.0.0.1:{bound[0]}/?token={token}"
    return ReviewServer(url=url, port=bound[0], token=token, _server=server, _last=last)
