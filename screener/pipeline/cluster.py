"""Scale-out: run the engine's tasks on a Dask cluster (optional extra `cluster`).

The engine's tasks are self-contained and picklable, and `screen()` takes any
concurrent.futures-style executor; a Dask client's executor is one.  Workers need screener
installed at the same version.

Trust: the scheduler and its workers can run code in this client (results are unpickled
here) and see the fleet's element sets.  Use them only on machines you control.  Plain
tcp:// is accepted for loopback addresses only (a local test cluster) unless
run.dask_allow_plain_tcp = true; anything else should be tls:// with the cluster's CA and a
client certificate (run.dask_tls_ca_file, dask_tls_cert_file, dask_tls_key_file).
"""

from __future__ import annotations

import ipaddress
import re

from ..errors import ConfigError

CONNECT_TIMEOUT_S = 10
_ADDRESS = re.compile(r"^(tcp|tls)://(\[[0-9a-fA-F:.]+\]|[A-Za-z0-9.-]+):([0-9]{1,5})$")


def _is_loopback(host: str) -> bool:
    host = host.strip("[]")
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def address_problem(address: str, allow_plain_tcp: bool = False, tls: dict | None = None) -> str | None:
    """None if `address` may be used; else why not."""
    m = _ADDRESS.match(address)
    if not m or not 0 < int(m.group(3)) < 65536:
        return (f"{address!r} is not a scheduler address: give tcp://HOST:PORT (loopback) or "
                f"tls://HOST:PORT")
    scheme, host = m.group(1), m.group(2)
    if scheme == "tcp" and not _is_loopback(host) and not allow_plain_tcp:
        return (f"plain tcp:// to {host} is refused: the scheduler and workers can run code in "
                f"this process; use tls:// with certificates, or set run.dask_allow_plain_tcp = "
                f"true for a network you trust")
    if scheme == "tls" and not (tls or {}).get("ca_file"):
        return "a tls:// scheduler needs run.dask_tls_ca_file (and a client certificate and key)"
    return None


def connect(address: str, tls: dict | None = None, allow_plain_tcp: bool = False):
    """(client, executor) for the scheduler at address (e.g. tls://host:8786)."""
    why = address_problem(address, allow_plain_tcp, tls)
    if why:
        raise ConfigError(why)
    try:
        from distributed import Client
        from distributed.security import Security
    except ImportError:
        raise ConfigError("run.dask_scheduler is set but dask.distributed is not installed "
                          "(pip install 'screener[cluster]')") from None
    security = None
    if address.startswith("tls://"):
        tls = tls or {}
        security = Security(tls_ca_file=tls.get("ca_file"), tls_client_cert=tls.get("cert_file"),
                            tls_client_key=tls.get("key_file"), require_encryption=True)
    try:
        client = Client(address, timeout=CONNECT_TIMEOUT_S, security=security)
    except (OSError, TimeoutError) as exc:
        raise ConfigError(f"cannot reach the Dask scheduler at {address}: {exc}") from None
    except (MemoryError, ValueError, TypeError, EOFError) as exc:
        # a peer that is not a Dask scheduler (or speaks another protocol) at that address
        raise ConfigError(f"{address} did not answer as a Dask scheduler "
                          f"({type(exc).__name__})") from None
    return client, client.get_executor(pure=False)
