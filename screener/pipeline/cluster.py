"""Scale-out: run the engine's tasks on a Dask cluster (optional extra `cluster`).

The engine's tasks are self-contained and picklable, and `screen()` takes any
concurrent.futures-style executor; a Dask client's executor is one.  Workers need screener
installed at the same version.
"""

from __future__ import annotations

from ..errors import ConfigError

CONNECT_TIMEOUT_S = 10


def connect(address: str):
    """(client, executor) for the scheduler at address (e.g. tcp://host:8786)."""
    try:
        from distributed import Client
    except ImportError:
        raise ConfigError("run.dask_scheduler is set but dask.distributed is not installed "
                          "(pip install 'screener[cluster]')") from None
    try:
        client = Client(address, timeout=CONNECT_TIMEOUT_S)
    except (OSError, TimeoutError) as exc:
        raise ConfigError(f"cannot reach the Dask scheduler at {address}: {exc}") from None
    return client, client.get_executor(pure=False)
