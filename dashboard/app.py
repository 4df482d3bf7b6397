"""Serve the o2transit dashboard: the screens by URL path, each a factory called once per session.

Each screen lives in its own subpackage (``case``, ``bedside``, ``ascent``, ``lecture``), with its
state and its views; ``look`` holds the palette and caution, ``widgets`` the shared figure frames,
``urlstate`` the page address, ``nav`` the header links, ``offline`` the exported pages and
``responsive`` what makes a screen answer a change within a frame or two.
"""

from __future__ import annotations

import errno
import ipaddress
import socket

import panel as pn
from tornado.web import GZipContentEncoding, OutputTransform

from . import connection, responsive, sessions, widgets
from .case.app import TITLE, page_shell
from .case.app import create_app as build_case_page

__all__ = [
    "SCREENS",
    "SECURITY_HEADERS",
    "TITLE",
    "PortBusyError",
    "create_app",
    "serve",
    "server_options",
]

responsive.install()  # MathJax only for pages with mathematics (none of ours)
connection.install()  # every page says at once when its server has gone
widgets.install_upload_guard()  # a file over an upload's limit is stopped in the browser


# Each factory gives a plain request the screen's shell only; the screen is built when the
# page connects (dashboard.sessions). Outside a server it builds the whole screen at once.
create_app = sessions.template_page("case", page_shell, build_case_page)


def _ascent_shell() -> pn.template.BootstrapTemplate:
    from .ascent.shell import page_shell as ascent_shell

    return ascent_shell()


def _build_ascent() -> pn.template.BootstrapTemplate:
    """The planner page; its modules (and pandas, via the table widget) load on first visit."""
    from .ascent.app import create_ascent_app

    return create_ascent_app()


def _lecture_shell(*objects) -> pn.Column:
    from .lecture.app import page_shell as lecture_shell

    return lecture_shell(*objects)


def _build_lecture() -> pn.Column:
    """The lecture page; its modules load on first visit."""
    from .lecture.app import create_lecture_app

    return create_lecture_app()


create_ascent_page = sessions.template_page(
    "ascent", _ascent_shell, _build_ascent, modules=(f"{__package__}.ascent.app",)
)
create_lecture_page = sessions.column_page(
    "lecture", _lecture_shell, _build_lecture, modules=(f"{__package__}.lecture.app",)
)


SCREENS: dict[str, object] = {
    "/": create_app,
    "/ascent": create_ascent_page,
    "/lecture": create_lecture_page,
}
"""URL path -> session factory; the link text of each path is in ``dashboard.nav.SCREEN_TITLES``."""


CONTENT_SECURITY_POLICY = "; ".join(  # noqa: FLY002 - one directive a line, with why
    (
        "default-src 'self'",
        # Bokeh and Panel write inline scripts (the document, its start-up) and inline styles
        # into every page, Bokeh evaluates model code from strings (without 'unsafe-eval' no page
        # renders: measured) and the module loader
        # (es-module-shims) runs its rewritten modules from blob: addresses
        "script-src 'self' 'unsafe-inline' 'unsafe-eval' blob:",
        "style-src 'self' 'unsafe-inline'",
        "img-src 'self' data: blob:",
        "font-src 'self' data:",
        "connect-src 'self'",  # the live connection (ws:) to this server; CSP 3 counts it
        "worker-src 'self' blob:",
        "object-src 'none'",
        "base-uri 'self'",
        "form-action 'self'",
        "frame-ancestors 'none'",
    )
)
"""Everything a page loads comes from this server (the dashboard is offline by design, see
``dashboard.offline``); no other site may frame it."""

SECURITY_HEADERS = {
    "Content-Security-Policy": CONTENT_SECURITY_POLICY,
    "X-Frame-Options": "DENY",
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "no-referrer",
}
"""Sent with every response of :func:`serve`: no framing by another page (clickjacking), no
scripts or styles from elsewhere, no guessing of content types, and no page address (which
holds the case) passed on to another site in a Referer."""


class SecurityHeaders(OutputTransform):
    """Adds :data:`SECURITY_HEADERS` to every response (pages, scripts, styles, errors)."""

    def transform_first_chunk(self, status_code, headers, chunk, finishing):
        for name, value in SECURITY_HEADERS.items():
            headers.setdefault(name, value)
        return status_code, headers, chunk


def server_options() -> dict:
    """``pn.serve`` keywords of the dashboard's server: :data:`responsive.SERVER_OPTIONS`
    (gzip), :data:`sessions.SESSION_OPTIONS` (how soon a closed page's session is let go)
    and the :data:`SECURITY_HEADERS` on every response.

    Tornado's own gzip transform is named too: once any transform is given, Tornado adds
    none of its own.
    """
    options = {**responsive.SERVER_OPTIONS, **sessions.SESSION_OPTIONS}
    transforms: list = [SecurityHeaders, sessions.RequestActivity]
    if options.get("compress_response"):
        transforms.append(GZipContentEncoding)
    return {**options, "transforms": transforms}


class PortBusyError(OSError):
    """The dashboard cannot listen on the asked address and port (in use, or not this machine's)."""


def _is_loopback(address: str) -> bool:
    if address == "localhost":
        return True
    try:
        return ipaddress.ip_address(address).is_loopback
    except ValueError:
        return False


def check_port(address: str, port: int) -> None:
    """Raise :class:`PortBusyError` with one readable line if ``address:port`` cannot be bound.

    Checked before anything is announced, so a busy port gives one line and a non-zero exit
    instead of an address that does not answer and a traceback.
    """
    try:
        infos = socket.getaddrinfo(address, port, type=socket.SOCK_STREAM)
    except socket.gaierror:
        raise PortBusyError(
            f"address {address!r} is not a name or address of this computer"
        ) from None
    family, _, _, _, sockaddr = infos[0]
    with socket.socket(family, socket.SOCK_STREAM) as probe:
        # the server itself sets SO_REUSEADDR; so does the probe, so a port left in
        # TIME_WAIT by a previous run counts as free, as it does for the server
        probe.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        try:
            probe.bind(sockaddr)
        except OSError as exc:
            if exc.errno == errno.EADDRINUSE:
                raise PortBusyError(
                    f"port {port} on {address} is already in use (another o2transit or another "
                    "program is listening there); choose another with --port"
                ) from None
            raise PortBusyError(
                f"cannot listen on {address}:{port} ({exc.strerror or exc})"
            ) from None


def websocket_origins(address: str, port: int) -> list[str]:
    """Origins whose pages may open the live connection.

    On this computer only (the default), the loopback names. Bound to any other address,
    the page is meant to be opened from other machines under whatever name or address they
    know this one by, so every origin is allowed (and ``serve`` prints a warning).
    """
    if _is_loopback(address):
        return sorted({f"{address}:{port}", f"localhost:{port}", f"127.0.0.1:{port}"})
    return ["*"]


def serve(port: int = 5006, address: str = "127.0.0.1", show: bool = True, **kwargs):
    """Serve the dashboard; blocks unless ``threaded=True`` is passed (then returns the server).

    Raises
    ------
    PortBusyError
        The port is taken or the address is not this computer's; nothing was started.
    """
    check_port(address, port)
    wildcard = address in ("0.0.0.0", "::", "")
    url = f"http://{'127.0.0.1' if wildcard else address}:{port}/"
    print(f"o2transit dashboard at {url}", flush=True)
    if not _is_loopback(address):
        others = f"http://{socket.gethostname()}:{port}/" if wildcard else url
        print(
            f"WARNING: listening on {address}: the page is reachable from the network, "
            f"not only from this computer (other machines open {others}).",
            flush=True,
        )
    sessions.freeze_startup_objects()  # before any session: full collections skip them
    return pn.serve(
        dict(SCREENS),
        address=address,
        port=port,
        show=show,
        title=TITLE,
        websocket_origin=websocket_origins(address, port),
        **{**server_options(), **kwargs},
    )
