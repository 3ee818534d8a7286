"""A TCP proxy on loopback that the tests control: forward, refuse (nothing listens), or blackhole (connections
are accepted and bytes taken in, but nothing ever comes back), and back to forwarding."""

from __future__ import annotations

import socket
import threading

FORWARD, REFUSE, BLACKHOLE = "forward", "refuse", "blackhole"


class TcpProxy:
    def __init__(self, target_port: int, target_host: str = "127.0.0.1") -> None:
        self.target = (target_host, target_port)
        self.mode = FORWARD
        self._sockets: set[socket.socket] = set()
        self._lock = threading.Lock()
        self._listener: socket.socket | None = None
        self.port = self._listen(0)

    def _listen(self, port: int) -> int:
        listener = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        listener.bind(("127.0.0.1", port))
        listener.listen(64)
        self._listener = listener
        threading.Thread(target=self._accept, args=(listener,), daemon=True).start()
        return listener.getsockname()[1]

    def _accept(self, listener: socket.socket) -> None:
        while True:
            try:
                client, _ = listener.accept()
            except OSError:
                return
            self._keep(client)
            if self.mode == BLACKHOLE:
                threading.Thread(target=self._swallow, args=(client,), daemon=True).start()
                continue
            try:
                upstream = socket.create_connection(self.target, timeout=5)
                upstream.settimeout(None)
            except OSError:
                client.close()
                continue
            self._keep(upstream)
            for source, sink in ((client, upstream), (upstream, client)):
                threading.Thread(target=self._pump, args=(source, sink), daemon=True).start()

    def _keep(self, sock: socket.socket) -> None:
        with self._lock:
            self._sockets.add(sock)

    def _swallow(self, sock: socket.socket) -> None:
        try:
            while sock.recv(65536):
                pass
        except OSError:
            pass

    def _pump(self, source: socket.socket, sink: socket.socket) -> None:
        try:
            while data := source.recv(65536):
                if self.mode == FORWARD:
                    sink.sendall(data)
                # blackholed: taken in, never passed on
        except OSError:
            pass
        finally:
            for sock in (source, sink):
                try:
                    sock.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass

    def _close_all(self) -> None:
        with self._lock:
            sockets, self._sockets = self._sockets, set()
        for sock in sockets:
            try:
                sock.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
            sock.close()

    def refuse(self) -> None:
        """Nothing listens on the port any more: connections are refused; open ones are closed."""
        self.mode = REFUSE
        if self._listener is not None:
            self._listener.close()
            self._listener = None
        self._close_all()

    def blackhole(self) -> None:
        """Open connections go silent and new ones are accepted but never answered."""
        self.mode = BLACKHOLE

    def restore(self) -> None:
        """Forwarding again; connections that went silent are closed, as a network outage leaves them."""
        if self.mode == BLACKHOLE:
            self._close_all()
        self.mode = FORWARD
        if self._listener is None:
            self._listen(self.port)

    def close(self) -> None:
        self.refuse()
