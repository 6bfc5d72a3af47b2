"""Check a ``--scheduler`` address before handing it to Dask.

Dask's client trusts the first eight bytes a server sends as the length of a
message and allocates that much: a service that speaks first (an SSH or mail
server, say) made it try to allocate exbibytes.  :func:`probe_scheduler`
accepts only ``tcp://HOST:PORT`` (or ``HOST:PORT``), connects with a timeout,
reads the greeting a Dask scheduler sends on connection, and refuses a peer
whose greeting announces an implausible length.  Refusals: a scheme we do
not support is bad input (exit 2); an unreachable address or a service that
is no Dask scheduler is the environment (exit 4).
"""
from __future__ import annotations

import socket
import struct

from ..errors import CircuitodeError, EnvironmentFault

__all__ = ["probe_scheduler", "GREETING_LIMIT"]

#: The largest greeting (bytes) a Dask scheduler's handshake is taken to need.
GREETING_LIMIT = 16 * 2**20


def _split(address: str) -> tuple[str, int]:
    text = address.strip()
    scheme, sep, rest = text.partition("://")
    if not sep:
        scheme, rest = "tcp", text
    if scheme.lower() != "tcp":
        raise CircuitodeError(
            f"error: the scheduler address {address!r} uses {scheme}://, which circuitode does not support\n"
            "  hint: give a tcp:// address, e.g. tcp://host:8786")
    host, colon, port = rest.rstrip("/").rpartition(":")
    host = host.strip("[]")
    if not colon or not host or not port.isdigit() or not 0 < int(port) < 65536:
        raise CircuitodeError(f"error: the scheduler address {address!r} is not HOST:PORT\n"
                              "  hint: e.g. --scheduler tcp://host:8786")
    return host, int(port)


def probe_scheduler(address: str, timeout: float = 5.0) -> None:
    """Refuse an address that is not ``tcp://HOST:PORT``, cannot be reached, or greets like no
    Dask scheduler.

    Raises
    ------
    CircuitodeError : unsupported scheme or malformed address (exit 2).
    EnvironmentFault : unreachable, or not a Dask scheduler (exit 4).
    """
    host, port = _split(address)
    what_to_do = "check the address and that a Dask scheduler runs there (dask scheduler --port PORT)"
    try:
        conn = socket.create_connection((host, port), timeout=timeout)
    except OSError as exc:
        raise EnvironmentFault(f"error: cannot reach the Dask scheduler at {address}: "
                               f"{exc.strerror or exc}\n  what to do: {what_to_do}") from None
    with conn:
        conn.settimeout(timeout)
        head = b""
        try:
            while len(head) < 8:
                part = conn.recv(8 - len(head))
                if not part:
                    break
                head += part
        except OSError:  # said nothing in time: leave the verdict to Dask's own timeout
            return
    if len(head) < 8:
        if head:
            raise EnvironmentFault(f"error: the service at {address} is not a Dask scheduler (it closed the "
                                   f"connection after {len(head)} bytes)\n  what to do: {what_to_do}")
        return
    (length,) = struct.unpack("<Q", head)
    if length > GREETING_LIMIT:
        raise EnvironmentFault(f"error: the service at {address} is not a Dask scheduler (its greeting "
                               f"announces {length:,} bytes; a scheduler's is under {GREETING_LIMIT:,})\n"
                               f"  what to do: {what_to_do}")
