"""Limits at the edge, measured on a real server: a 50 MB body is refused long before it has been sent.

The server is `trendaudit serve` in a subprocess on loopback with a 1 MB upload limit. A raw socket
sends the headers and then the body in 64 kB pieces, watching for an answer after each, and counts what
had been sent when the 413 arrived. With a Content-Length over the limit the answer must come before any
of the body; without one (chunked), once about the limit has streamed. Either way the server's memory
must not grow by anything like the body's size.
"""

from __future__ import annotations

import select
import socket
import time

import pytest

from api.servers import Server

from .resources import rss_bytes

pytestmark = pytest.mark.slow  # starts a server process

LIMIT = 1024 * 1024
BODY = 50 * 1024 * 1024
PIECE = b"{" * 65536


def _answer_ready(sock: socket.socket, wait: float) -> bool:
    return bool(select.select([sock], [], [], wait)[0])


def _push(port: int, head: bytes, pieces) -> tuple[int, int, float]:
    """(status, body bytes sent before the answer, seconds until the answer)."""
    sock = socket.create_connection(("127.0.0.1", port), timeout=30)
    started = time.monotonic()
    sent = 0
    try:
        sock.sendall(head)
        answered = _answer_ready(sock, 0.5)  # a refusal on the headers alone comes at once
        for piece in pieces:
            if answered:
                break
            try:
                sock.sendall(piece)
            except (BrokenPipeError, ConnectionResetError):
                break  # the server stopped reading: its answer is waiting
            sent += len(piece)
            answered = _answer_ready(sock, 0)
        _answer_ready(sock, 10)
        elapsed = time.monotonic() - started
        reply = sock.recv(65536)
    finally:
        sock.close()
    return int(reply.split(b" ", 2)[1]), sent, elapsed


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    folder = tmp_path_factory.mktemp("edge")
    running = Server(f"sqlite:///{folder / 'edge.sqlite3'}", folder / "server.log", max_upload_bytes=str(LIMIT))
    yield running
    running.stop()


def test_a_declared_50_mb_body_is_refused_before_any_of_it_is_sent(server):
    before = rss_bytes(server.process.pid)
    head = (f"POST /api/v1/audits HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            f"Content-Length: {BODY}\r\n\r\n").encode()
    status, sent, seconds = _push(server.port, head, (PIECE for _ in range(BODY // len(PIECE))))
    print(f"declared 50 MB: {status} after {sent:,} body bytes, {seconds * 1000:.0f} ms")
    assert status == 413 and sent == 0 and seconds < 2.0
    assert rss_bytes(server.process.pid) - before < 10 * 1024 * 1024


def test_a_streamed_50_mb_body_is_cut_off_near_the_limit(server):
    before = rss_bytes(server.process.pid)
    head = (b"POST /api/v1/audits HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            b"Transfer-Encoding: chunked\r\n\r\n")
    chunk = f"{len(PIECE):x}\r\n".encode() + PIECE + b"\r\n"
    status, sent, seconds = _push(server.port, head, (chunk for _ in range(BODY // len(PIECE))))
    print(f"chunked 50 MB: {status} after {sent:,} bytes sent, {seconds * 1000:.0f} ms")
    # What the kernel buffers on loopback comes on top of the limit; the rest of the 50 MB is never sent.
    assert status == 413 and sent < 10 * LIMIT and seconds < 5.0
    assert rss_bytes(server.process.pid) - before < 10 * 1024 * 1024


def test_the_server_still_answers_after_the_refusals(server):
    status, _, _ = _push(server.port, b"GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n", ())
    assert status == 200
