"""Fetching a data file from a link a user gave, without letting the link reach anything it should not.

A server that fetches user-given URLs can be turned on itself and its network (the cloud metadata address, an
admin port on loopback, a private service). So, for every hop, redirects included:
- the scheme is https (http only when the policy allows it); no user:password@ in the URL; the port is one the
  policy allows; a host written as an odd number form (2130706433, 0x7f.1, 0177.0.0.1) is refused outright;
- the name is resolved once, every address it resolves to must be public (not private, loopback, link-local,
  multicast, reserved, unspecified or shared, IPv4 inside IPv6 included), and the connection goes to the checked
  address itself, with the name sent as the Host header and as the TLS server name (so certificates are still
  checked against the name and a second, different DNS answer is never used);
- redirects are followed by hand, each target checked again, at most ``max_redirects`` of them;
- the body is streamed and cut off past ``max_bytes``; the whole fetch has one deadline; no proxy, .netrc or
  cookie from the environment is used and no credentials are sent.
The bytes come back with their provenance (URL, final URL, time, status, size, SHA-256, content type).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import ipaddress
import re
import socket
import time
from dataclasses import dataclass
from typing import Callable
from urllib.parse import urljoin, urlsplit

import httpx

from app.errors import InputError, LimitExceeded, Location

URL_FIELD = Location(field="url")
REDIRECT_STATUSES = frozenset({301, 302, 303, 307, 308})
_NUMBER_PART = re.compile(r"0x[0-9a-f]*|\d+")
DEFAULT_PORTS = {"https": 443, "http": 80}

Resolver = Callable[[str, int], list[str]]


@dataclass(frozen=True)
class FetchPolicy:
    """What a fetch may do. The defaults are for a public server; tests widen them for a loopback server."""

    allow_http: bool = False
    allow_loopback: bool = False  # only for tests against a local server
    allowed_ports: frozenset[int] | None = frozenset({443, 80})  # None: any port
    max_redirects: int = 3
    max_bytes: int = 20 * 1024 * 1024
    timeout_seconds: float = 30.0  # the whole fetch, every hop and the body
    user_agent: str = "TrendAudit-fetch/1"


@dataclass(frozen=True)
class Fetched:
    content: bytes
    url: str  # as given
    final_url: str  # after redirects
    redirects: tuple[str, ...]  # every URL redirected to, in order
    retrieved_at: str  # ISO 8601, UTC
    status: int
    size: int
    sha256: str
    content_type: str  # as the server declared it
    sniffed: str  # what the bytes are: "spreadsheet", "text"

    def provenance_note(self) -> str:
        return (f"fetched from {self.final_url} at {self.retrieved_at} (HTTP {self.status}, {self.size:,} bytes, "
                f"sha256 {self.sha256})")


def resolve_addresses(host: str, port: int) -> list[str]:
    """Every address the name resolves to (the system resolver)."""
    try:
        infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    except socket.gaierror as error:
        raise InputError(f"the name {host!r} cannot be resolved ({error.strerror})", location=URL_FIELD,
                         fix="Check the link's address") from None
    return [info[4][0] for info in infos]


def fetch(url: str, policy: FetchPolicy = FetchPolicy(), *, resolve: Resolver = resolve_addresses,
          transport: httpx.BaseTransport | None = None) -> Fetched:
    """The file at ``url``, refused with an InputError at the first thing the policy does not allow."""
    deadline = time.monotonic() + policy.timeout_seconds
    retrieved_at = dt.datetime.now(dt.timezone.utc).replace(microsecond=0).isoformat()
    current, redirects = url, []
    with httpx.Client(transport=transport or httpx.HTTPTransport(retries=0), follow_redirects=False,
                      trust_env=False, verify=True) as client:
        while True:
            status, headers, body = _one_hop(client, current, policy, resolve, deadline)
            if status not in REDIRECT_STATUSES:
                break
            if len(redirects) >= policy.max_redirects:
                raise InputError(f"the link redirects more than {policy.max_redirects} times", location=URL_FIELD,
                                 fix="Link to the data file itself")
            location = headers.get("location")
            if not location:
                raise InputError(f"the link answered {status} without saying where to", location=URL_FIELD,
                                 fix="Link to the data file itself")
            current = urljoin(current, location)
            redirects.append(current)
    if status != 200:
        raise InputError(f"the link answered HTTP {status}, not the file", location=URL_FIELD,
                         fix="Check that the link opens the data file in a browser")
    return Fetched(content=body, url=url, final_url=current, redirects=tuple(redirects), retrieved_at=retrieved_at,
                   status=status, size=len(body), sha256=hashlib.sha256(body).hexdigest(),
                   content_type=headers.get("content-type", ""), sniffed=sniff_content(body))


def _one_hop(client: httpx.Client, url: str, policy: FetchPolicy, resolve: Resolver,
             deadline: float) -> tuple[int, httpx.Headers, bytes]:
    scheme, host, port = check_url(url, policy)
    address = checked_address(host, port, policy, resolve)
    target = httpx.URL(url).copy_with(host=str(address))
    host_header = host if port == DEFAULT_PORTS[scheme] else f"{host}:{port}"
    remaining = _remaining(deadline, policy)
    extensions = {"sni_hostname": host} if scheme == "https" else {}
    request = client.build_request("GET", target, headers={
        "Host": host_header, "User-Agent": policy.user_agent, "Accept": "*/*", "Accept-Encoding": "identity"},
        extensions=extensions, timeout=httpx.Timeout(remaining))
    try:
        response = client.send(request, stream=True)
        try:
            if response.status_code != 200:
                return response.status_code, response.headers, b""
            return response.status_code, response.headers, _body(response, policy, deadline)
        finally:
            response.close()
    except httpx.TimeoutException:
        raise _too_slow(policy) from None
    except httpx.HTTPError as error:
        raise InputError(f"the link could not be fetched ({type(error).__name__})", location=URL_FIELD,
                         fix="Check the link, or download the file and upload it") from None


def _body(response: httpx.Response, policy: FetchPolicy, deadline: float) -> bytes:
    declared = response.headers.get("content-length", "")
    if declared.isdigit() and int(declared) > policy.max_bytes:
        raise _too_large(policy)
    body = bytearray()
    for chunk in response.iter_bytes():
        body += chunk
        if len(body) > policy.max_bytes:
            raise _too_large(policy)
        if time.monotonic() > deadline:
            raise _too_slow(policy)
    return bytes(body)


def _remaining(deadline: float, policy: FetchPolicy) -> float:
    left = deadline - time.monotonic()
    if left <= 0:
        raise _too_slow(policy)
    return left


def _too_large(policy: FetchPolicy) -> LimitExceeded:
    return LimitExceeded(f"the linked file is larger than {policy.max_bytes:,} bytes, the most this service fetches",
                         location=URL_FIELD, fix="Link to a smaller file, or download it and send monthly or annual "
                                                 "means")


def _too_slow(policy: FetchPolicy) -> InputError:
    return InputError(f"the link did not deliver the file within {policy.timeout_seconds:g} seconds",
                      location=URL_FIELD, fix="Try again later, or download the file and upload it")


def check_url(url: str, policy: FetchPolicy) -> tuple[str, str, int]:
    """(scheme, host, port) of a URL the policy allows; InputError saying why not otherwise."""
    try:
        parts = urlsplit(url.strip())
        port = parts.port
    except ValueError as error:
        raise InputError(f"the link cannot be read as a URL ({error})", location=URL_FIELD,
                         fix="Give a full https:// link") from None
    scheme = parts.scheme.lower()
    allowed = ("https", "http") if policy.allow_http else ("https",)
    if scheme not in allowed:
        raise InputError(f"links starting {scheme or '(no scheme)'}:// are not fetched (only "
                         f"{' and '.join(allowed)})", location=URL_FIELD, fix="Give an https:// link to the file")
    if parts.username is not None or parts.password is not None or "@" in parts.netloc:
        raise InputError("the link carries a user name or password, which this service never sends",
                         location=URL_FIELD, fix="Give a link that opens without logging in")
    host = (parts.hostname or "").rstrip(".")
    if not host:
        raise InputError("the link has no host name", location=URL_FIELD, fix="Give a full https:// link")
    port = port if port is not None else DEFAULT_PORTS[scheme]
    if policy.allowed_ports is not None and port not in policy.allowed_ports:
        raise InputError(f"port {port} is not fetched (only {sorted(policy.allowed_ports)})", location=URL_FIELD,
                         fix="Give a link on the usual https port")
    if _odd_number_host(host):
        raise InputError(f"the host {host!r} is an address written as a bare number", location=URL_FIELD,
                         fix="Give the site's name, not a numeric address")
    return scheme, host, port


def _odd_number_host(host: str) -> bool:
    """A host of numbers that is not a plain dotted IPv4 address: 2130706433, 0x7f.1, 0177.0.0.1, 127.1."""
    parts = host.lower().split(".")
    if not all(_NUMBER_PART.fullmatch(p) for p in parts):
        return False
    try:
        ipaddress.IPv4Address(host)
    except ValueError:
        return True
    return False


def checked_address(host: str, port: int, policy: FetchPolicy, resolve: Resolver) -> ipaddress._BaseAddress:
    """The address to connect to: the host itself when it is one, else its first resolved address, once every
    resolved address has passed ``refuse_address``."""
    try:
        literal = ipaddress.ip_address(host.strip("[]").split("%")[0])  # a zone (fe80::1%eth0) names no host
    except ValueError:
        literal = None
    addresses = [literal] if literal is not None else [_parse(a, host) for a in resolve(host, port)]
    if not addresses:
        raise InputError(f"the name {host!r} resolves to no address", location=URL_FIELD, fix="Check the link")
    for address in addresses:
        refuse_address(address, host, policy)
    return addresses[0]


def _parse(text: str, host: str) -> ipaddress._BaseAddress:
    try:
        return ipaddress.ip_address(text.split("%")[0])
    except ValueError:
        raise InputError(f"the name {host!r} resolved to {text!r}, which is not an address", location=URL_FIELD,
                         fix="Check the link") from None


def refuse_address(address: ipaddress._BaseAddress, host: str, policy: FetchPolicy) -> None:
    inner = address
    if isinstance(address, ipaddress.IPv6Address):
        inner = address.ipv4_mapped or address.sixtofour or (address.teredo or (None, None))[1] or address
    for candidate in dict.fromkeys((inner, address)):  # the embedded IPv4 address names the kind best
        if policy.allow_loopback and candidate.is_loopback:
            continue
        kind = address_kind(candidate)
        if kind is not None:
            raise InputError(f"the link's host {host!r} is at {address}, {kind} address, which this service does not "
                             "fetch from", location=URL_FIELD, fix="Give a link to a public web site")


def address_kind(address: ipaddress._BaseAddress) -> str | None:
    """Why an address is not public ("a loopback", "a private", ...), or None for a public one."""
    for kind, test in (("an unspecified", address.is_unspecified), ("a loopback", address.is_loopback),
                       ("a link-local", address.is_link_local), ("a multicast", address.is_multicast),
                       ("a private", address.is_private), ("a reserved", address.is_reserved),
                       ("a non-public", not address.is_global)):
        if test:
            return kind
    return None


def sniff_content(body: bytes) -> str:
    """What the bytes are, whatever the server called them; InputError when they are no data file."""
    head = body[:1024].lstrip().lower()
    if body.startswith((b"PK\x03\x04", b"\xd0\xcf\x11\xe0")):
        return "spreadsheet"
    if head.startswith((b"<!doctype html", b"<html", b"<?xml")) or b"<html" in head[:256]:
        raise InputError("the link leads to a web page, not a data file", location=URL_FIELD,
                         fix="Link to the CSV, text or spreadsheet file itself (often a 'download' link)")
    if head.startswith(b"%pdf"):
        raise InputError("the link leads to a PDF document, not a data file", location=URL_FIELD,
                         fix="Link to the CSV, text or spreadsheet version of the data")
    try:
        body[:65536].decode("utf-8")
    except UnicodeDecodeError as error:
        if error.start < min(len(body), 65536) - 4:  # a character cut at the sample's end is not an error
            raise InputError("the link gives a binary file that is neither text nor a spreadsheet",
                             location=URL_FIELD, fix="Link to a CSV, text, .xlsx or .ods file") from None
    return "text"
