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

from . import responsive
from .case.app import TITLE, create_app

__all__ = ["SCREENS", "TITLE", "PortBusyError", "create_app", "serve"]

responsive.install()  # MathJax only for pages with mathematics (none of ours)


def create_ascent_page() -> pn.template.BootstrapTemplate:
    """The planner page; its modules (and pandas, via the table widget) load on first visit."""
    from .ascent.app import create_ascent_app

    return create_ascent_app()


def create_lecture_page() -> pn.Column:
    """The lecture page; its modules load on first visit."""
    from .lecture.app import create_lecture_app

    return create_lecture_app()


SCREENS: dict[str, object] = {
    "/": create_app,
    "/ascent": create_ascent_page,
    "/lecture": create_lecture_page,
}
"""URL path -> session factory; the link text of each path is in ``dashboard.nav.SCREEN_TITLES``."""


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
    url = f"http://{address}:{port}/"
    print(f"o2transit dashboard at {url}", flush=True)
    if not _is_loopback(address):
        print(
            f"WARNING: listening on {address}: the page is reachable from the network, "
            "not only from this computer.",
            flush=True,
        )
    return pn.serve(
        dict(SCREENS),
        address=address,
        port=port,
        show=show,
        title=TITLE,
        websocket_origin=websocket_origins(address, port),
        **{**responsive.SERVER_OPTIONS, **kwargs},
    )
