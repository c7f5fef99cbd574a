"""A loopback TCP proxy that a test can cut and restore, to simulate a database outage."""

from __future__ import annotations

import contextlib
import socket
import threading


class TcpProxy:
    """Forwards 127.0.0.1:``port`` to 127.0.0.1:``target``; :meth:`cut` drops all until :meth:`restore`."""

    def __init__(self, port: int, target: int) -> None:
        self.port, self.target = port, target
        self._listener: socket.socket | None = None
        self._conns: set[socket.socket] = set()
        self._lock = threading.Lock()

    def start(self) -> TcpProxy:
        listener = socket.socket()
        listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        listener.bind(("127.0.0.1", self.port))
        listener.listen(64)
        self._listener = listener
        threading.Thread(target=self._accept, args=(listener,), daemon=True).start()
        return self

    def restore(self) -> None:
        self.start()

    def cut(self) -> None:
        """Refuse new connections and reset the open ones, as a server that went away."""
        with self._lock:
            listener, self._listener = self._listener, None
            conns, self._conns = self._conns, set()
        if listener is not None:
            with contextlib.suppress(OSError):
                listener.shutdown(socket.SHUT_RDWR)
            listener.close()
        for conn in conns:
            with contextlib.suppress(OSError):
                conn.shutdown(socket.SHUT_RDWR)
            conn.close()

    close = cut

    def _accept(self, listener: socket.socket) -> None:
        while True:
            try:
                client, _ = listener.accept()
            except OSError:
                return
            try:
                upstream = socket.create_connection(("127.0.0.1", self.target), timeout=5)
                upstream.settimeout(None)
            except OSError:
                client.close()
                continue
            with self._lock:
                if self._listener is not listener:
                    client.close()
                    upstream.close()
                    return
                self._conns |= {client, upstream}
            for a, b in ((client, upstream), (upstream, client)):
                threading.Thread(target=self._pipe, args=(a, b), daemon=True).start()

    def _pipe(self, src: socket.socket, dst: socket.socket) -> None:
        try:
            while data := src.recv(65536):
                dst.sendall(data)
        except OSError:
            pass
        finally:
            for s in (src, dst):
                with contextlib.suppress(OSError):
                    s.shutdown(socket.SHUT_RDWR)
            with self._lock:
                self._conns.discard(src)
                self._conns.discard(dst)
            src.close()
