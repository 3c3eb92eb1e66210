"""Previewing a built site over HTTP, and rebuilding it when its files change.

Only the site's own files are served: a path with a NUL byte is a bad request, and a
link that leads out of the site is not found. Idle connections time out, the number
served at once is bounded, and a client that goes away is not an error. A request
must arrive whole (its line and headers) within :data:`HEADER_SECONDS`, however
slowly its bytes trickle in; and when every connection slot is taken, a new client
takes the slot of the connection that has waited longest without sending a whole
request, so that half-sent requests cannot lock the server.
"""

from __future__ import annotations

import contextlib
import socket
import threading
import time
import urllib.parse
from collections.abc import Callable
from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from typing import Any

#: Seconds a connection may stay idle (a half-sent request is dropped after this).
IDLE_SECONDS = 20
#: Connections served at once; more are closed at once.
MAX_CONNECTIONS = 32
#: Seconds a request's line and headers may take to arrive, in all (a browser sends
#: them in one packet; a client trickling a byte at a time is cut off).
HEADER_SECONDS = 10.0
#: Seconds a new client waits for the slot of a connection cut off for it.
SLOT_WAIT_SECONDS = 2.0


class SiteHandler(SimpleHTTPRequestHandler):
    """Serves the files under ``directory`` and nothing else."""

    timeout = IDLE_SECONDS

    def send_head(self) -> Any:
        raw = urllib.parse.unquote(self.path.split("?", 1)[0].split("#", 1)[0])
        if "\x00" in raw:
            self.send_error(400, "bad path")
            return None
        root = Path(self.directory).resolve()
        real = Path(self.translate_path(self.path)).resolve()
        if real != root and root not in real.parents:
            self.send_error(404, "not found")
            return None
        return super().send_head()

    def log_message(self, format: str, *args: Any) -> None:  # noqa: A002 (the base class's name)
        """Quiet: a preview server has no log to keep."""

    def handle(self) -> None:
        try:
            super().handle()
        except (ConnectionError, TimeoutError):
            pass  # the browser went away or stalled: nothing to report
        finally:
            self.server.waiting(self.connection, False)  # type: ignore[attr-defined]

    def handle_one_request(self) -> None:
        self.server.waiting(self.connection, True)  # type: ignore[attr-defined]
        super().handle_one_request()

    def parse_request(self) -> bool:
        done = super().parse_request()  # reads the headers
        self.server.waiting(self.connection, False)  # type: ignore[attr-defined]
        return done


class PreviewServer(ThreadingHTTPServer):
    """A threading server with a bound on connections served at once."""

    daemon_threads = True

    def __init__(self, address: tuple[str, int], folder: Path):
        self._slots = threading.BoundedSemaphore(MAX_CONNECTIONS)
        self._lock = threading.Lock()
        self._waiting: dict[socket.socket, float] = {}  # connection: since when it waits for a request
        super().__init__(address, lambda *a: SiteHandler(*a, directory=str(folder)))

    def waiting(self, connection: socket.socket, now_waiting: bool) -> None:
        """Mark a connection as waiting for a whole request (or no longer)."""
        with self._lock:
            if now_waiting:
                self._waiting[connection] = time.monotonic()
            else:
                self._waiting.pop(connection, None)

    def _cut(self, connection: socket.socket) -> None:
        """End a connection's wait: its reads return at once, its thread ends."""
        self._waiting.pop(connection, None)
        with contextlib.suppress(OSError):
            connection.shutdown(socket.SHUT_RDWR)

    def service_actions(self) -> None:
        """Called by serve_forever about twice a second: cut off the connections whose
        request has not arrived whole within :data:`HEADER_SECONDS`."""
        late = time.monotonic() - HEADER_SECONDS
        with self._lock:
            for connection in [c for c, since in self._waiting.items() if since < late]:
                self._cut(connection)

    def process_request(self, request: Any, client_address: Any) -> None:
        if not self._slots.acquire(blocking=False):
            with self._lock:  # every slot taken: the longest wait for a request gives way
                if self._waiting:
                    self._cut(min(self._waiting, key=self._waiting.__getitem__))
            if not self._slots.acquire(timeout=SLOT_WAIT_SECONDS):
                self.shutdown_request(request)
                return
        super().process_request(request, client_address)

    def process_request_thread(self, request: Any, client_address: Any) -> None:
        try:
            super().process_request_thread(request, client_address)
        finally:
            self._slots.release()

    def handle_error(self, request: Any, client_address: Any) -> None:
        """Errors are the handler's to report; nothing is printed per request."""


def file_state(paths: list[Path]) -> tuple[tuple[str, int | None, int | None], ...]:
    """(path, modification time, size) of each path; None where it cannot be read."""
    state: list[tuple[str, int | None, int | None]] = []
    for path in sorted(paths):
        try:
            st = path.stat()
            state.append((str(path), st.st_mtime_ns, st.st_size))
        except OSError:
            state.append((str(path), None, None))
    return tuple(state)


def watch(
    load: Callable[[], Any],
    inputs: Callable[[Any], list[Path]],
    rebuild: Callable[[Any], None],
    say: Callable[[str], None],
    stop: threading.Event,
    paths: list[Path],
    interval: float = 1.0,
) -> None:
    """Until ``stop`` is set: when a file of ``paths`` changes, ``load`` the
    configuration again and ``rebuild``; the paths then follow the configuration.

    Only file times are polled; the configuration is read again only on a change.
    Each failure is reported once per change, whatever its kind, and the watch goes on
    (the last good site stays served: builds are atomic)."""
    seen = file_state(paths)
    while not stop.wait(interval):
        now = file_state(paths)
        if now == seen:
            continue
        seen = now
        try:
            config = load()
            paths = inputs(config)
            seen = file_state(paths)
            say("change seen: rebuilding")
            rebuild(config)
            say("rebuilt")
        except Exception as exc:  # noqa: BLE001 - any failure: report once, keep watching
            say(f"cardgen: error: {exc}; still serving the last good site")
