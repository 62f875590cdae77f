"""Run stress work on a Dask distributed cluster (optional extra ``ookframe[dask]``).

``cluster_executor(address)`` connects to a running scheduler and yields its
``concurrent.futures.Executor``, which ``run_stress``, ``run_sweep``, ``run_margin`` and
``run_noise`` accept as ``executor=``. Each chunk is one task; chunk seeds are spawned
before submission, so a run gives the same counts on a cluster as in a process pool.
Every worker must import the same ookframe version as the client: the connection is
refused otherwise (a worker with another version could compute other counts).
"""

from __future__ import annotations

import logging
import math
import re
from collections.abc import Iterator
from concurrent.futures import Executor
from contextlib import contextmanager

from ..errors import ClusterError

#: seconds to wait for the scheduler to answer and for a first worker (CLI default)
DEFAULT_CONNECT_TIMEOUT_S = 10.0

_INSTALL_HINT = 'install the extra: pip install "ookframe[dask]"'
#: scheduler addresses accepted: [scheme://]host:port (IPv6 hosts in brackets)
_ADDRESS = re.compile(r"^(?:(?P<scheme>[a-z]+)://)?(?P<host>\[[0-9A-Fa-f:.]+\]|[^\s:/\[\]]+)"
                      r":(?P<port>\d{1,5})$")
SCHEMES = ("tcp", "tls", "ws", "wss")


def check_address(address: str) -> str:
    """Return ``address`` stripped, or raise ClusterError naming the expected form."""
    text = address.strip() if isinstance(address, str) else ""
    m = _ADDRESS.match(text)
    shown = text if len(text) <= 80 else text[:77] + "..."
    if not m or not 1 <= int(m["port"]) <= 65535:
        raise ClusterError(f"--scheduler {shown!r}: expected [SCHEME://]HOST:PORT, e.g. "
                           "tcp://10.0.0.5:8786")
    if m["scheme"] and m["scheme"] not in SCHEMES:
        raise ClusterError(f"--scheduler {shown!r}: scheme {m['scheme']!r} not supported; "
                           f"allowed: {', '.join(SCHEMES)}")
    return text


def _worker_version() -> str:
    """Return the ookframe version a worker imports (runs on the worker)."""
    import ookframe

    return ookframe.__version__


def _short(exc: BaseException, limit: int = 160) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if len(text) <= limit else text[: limit - 3] + "..."


@contextmanager
def cluster_executor(address: str,
                     timeout_s: float = DEFAULT_CONNECT_TIMEOUT_S) -> Iterator[Executor]:
    """Yield an executor running on the Dask scheduler at ``address`` (e.g.
    ``tcp://10.0.0.5:8786``); the client is closed afterwards.

    Raises ClusterError (one line) when ``distributed`` is not installed, the scheduler
    does not answer within ``timeout_s`` seconds, no worker joins within ``timeout_s``,
    or a worker runs another ookframe version (or none).
    """
    if not isinstance(address, str) or not address.strip():
        raise ClusterError("--scheduler: give the scheduler address, e.g. tcp://host:8786")
    address = check_address(address)
    if not (math.isfinite(timeout_s) and timeout_s > 0):
        raise ClusterError(f"scheduler timeout must be a positive number of seconds, "
                           f"got {timeout_s}")
    try:
        import distributed
    except ImportError:
        raise ClusterError(f"--scheduler needs dask distributed, which is not installed; "
                           f"{_INSTALL_HINT}") from None
    from .. import __version__

    quiet = _Quiet()
    with quiet:
        try:
            client = distributed.Client(address, timeout=timeout_s, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as e:
            raise ClusterError(f"cannot reach the Dask scheduler at {address!r} within "
                               f"{timeout_s:g} s: {_short(e)}") from None
    try:
        with quiet:
            try:
                client.wait_for_workers(1, timeout=timeout_s)
            except (OSError, TimeoutError) as e:
                raise ClusterError(f"the Dask scheduler at {address!r} has no worker after "
                                   f"{timeout_s:g} s: {_short(e)}") from None
            try:
                versions = client.run(_worker_version, on_error="return")
            except Exception as e:  # noqa: BLE001 - any worker-side failure is reported
                raise ClusterError(f"cannot run on the workers of {address!r}: "
                                   f"{_short(e)}") from None
        bad = {w: v for w, v in versions.items() if v != __version__}
        if bad:
            w, v = sorted(bad.items())[0]
            got = v if isinstance(v, str) else f"no ookframe ({_short(v, 60)})"
            raise ClusterError(f"Dask worker {w} runs {got}, this client ookframe "
                               f"{__version__}; install the same version on every worker")
        yield client.get_executor()
    finally:
        with quiet:
            client.close()


class _Quiet:
    """Context manager holding back distributed's log warnings (the CLI prints one line)."""

    _names = ("distributed", "distributed.client", "distributed.comm", "distributed.core")

    def __enter__(self) -> None:
        self._saved = [(logging.getLogger(n), logging.getLogger(n).level) for n in self._names]
        for lg, _ in self._saved:
            lg.setLevel(logging.ERROR + 10)

    def __exit__(self, *exc: object) -> None:
        for lg, level in self._saved:
            lg.setLevel(level)
