"""Dask cluster addresses and security, checked before a sweep starts.

``--cluster`` takes ``tcp://HOST:PORT``, ``tls://HOST:PORT`` or ``HOST:PORT`` (TCP), with an
IPv6 host in brackets (``tls://[::1]:8786``). A malformed address, or TLS files that do not
exist, are bad input (exit 2) before any case runs; so is a scheduler that cannot be reached
(:func:`sim.sweeps.executors.run_sweep`). A plain-TCP address that is not on this machine
gets a warning: Dask sends pickled Python code and data over the connection, and anyone on
the network path can read or change them (see the README's threat model).
"""

from __future__ import annotations

import ipaddress
import re
import socket
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sim.core.errors import InputError

_ADDRESS = re.compile(r"(?:(?P<scheme>tcp|tls)://)?(?P<host>\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9.-]+)"
                      r":(?P<port>\d{1,5})/?")


@dataclass(frozen=True)
class ClusterAddress:
    """A checked scheduler address."""

    scheme: str
    host: str
    port: int

    def __str__(self) -> str:
        host = f"[{self.host}]" if ":" in self.host else self.host
        return f"{self.scheme}://{host}:{self.port}"


def parse_cluster_address(text: str, option: str = "--cluster") -> ClusterAddress:
    """``text`` as a :class:`ClusterAddress`, else an :class:`InputError` naming ``option``."""
    m = _ADDRESS.fullmatch(text.strip())
    port = int(m["port"]) if m else 0
    if m is None or not 0 < port < 65536:
        raise InputError(option, None, "a Dask scheduler address such as tcp://10.0.0.5:8786 "
                         "or tls://sched.example:8786", text)
    host = m["host"].strip("[]")
    return ClusterAddress(m["scheme"] or "tcp", host, port)


def is_this_machine(host: str) -> bool:
    """True if ``host`` is a loopback address or one of this machine's names or addresses."""
    try:
        if ipaddress.ip_address(host).is_loopback:
            return True
    except ValueError:
        if host in ("localhost", socket.gethostname(), socket.getfqdn()):
            return True
    try:
        mine = {a[4][0] for a in socket.getaddrinfo(socket.gethostname(), None)}
        theirs = {a[4][0] for a in socket.getaddrinfo(host, None)}
    except OSError:
        return False
    return bool(theirs) and theirs <= mine | {"127.0.0.1", "::1"}


def plain_tcp_warning(addr: ClusterAddress) -> str | None:
    """The warning to print for ``addr``, or None (TLS, or a scheduler on this machine)."""
    if addr.scheme == "tls" or is_this_machine(addr.host):
        return None
    return (f"warning: --cluster {addr} is plain TCP to another machine: Dask sends pickled "
            "code and data unencrypted and unauthenticated; use tls:// with --tls-ca-file, "
            "--tls-cert and --tls-key, or a private network")


def cluster_security(ca_file: str | None, cert: str | None, key: str | None,
                     addr: ClusterAddress | None) -> Any:
    """A ``distributed.Security`` for TLS (None without TLS files); files must exist."""
    given = {"--tls-ca-file": ca_file, "--tls-cert": cert, "--tls-key": key}
    if not any(given.values()):
        if addr is not None and addr.scheme == "tls":
            raise InputError("--cluster", None, "with tls://, the TLS files --tls-ca-file, "
                             "--tls-cert and --tls-key", str(addr))
        return None
    if addr is None:
        raise InputError("--tls-ca-file", None, "TLS files only with --cluster tls://...")
    for option, value in given.items():
        if not value:
            raise InputError(option, None, "all three of --tls-ca-file, --tls-cert, --tls-key")
        if not Path(value).is_file():
            raise InputError(option, None, "an existing file (no such file)", value)
    if addr.scheme != "tls":
        raise InputError("--cluster", None, "a tls:// address when TLS files are given",
                         str(addr))
    try:
        from distributed.security import Security
    except ImportError:
        raise InputError("--cluster", None, "dask.distributed installed (pip install "
                         "'gaitload[cluster]')") from None
    return Security(tls_ca_file=ca_file, tls_client_cert=cert, tls_client_key=key,
                    require_encryption=True)
