"""A batch's campaigns on a Dask distributed cluster (the optional extra ``ttsp[dask]``): the
workers need ttsp installed and the same paths to the inputs and the batch folder.

Layer 5 (a shell).
"""

from __future__ import annotations

import contextlib
import uuid
from collections.abc import Callable, Sequence
from typing import Any

from ..exceptions import DataError
from .rows import error_text, failed_row

__all__ = ["run_on_dask"]


def _dask_client(scheduler, client):
    """(the distributed module, a client, whether this run owns it and must close it)."""
    try:
        import distributed
    except ImportError:
        raise DataError("running on a Dask cluster needs the optional extra: "
                        "pip install 'ttsp[dask]' (dask[distributed])") from None
    if client is not None:
        return distributed, client, False
    try:
        return distributed, distributed.Client(scheduler, timeout="30s"), True
    except (OSError, TimeoutError) as exc:
        raise DataError(f"cannot reach the Dask scheduler at {scheduler!r}: {exc}") from None


def run_on_dask(payloads: Sequence[dict], scheduler: str | None, client: Any,
                task: Callable[[dict], dict], on_done: Callable[[dict], object]) -> None:
    """Submit every payload to a Dask cluster and call ``on_done`` with each row as it arrives.

    Parameters
    ----------
    payloads : sequence of dict
        Made by :func:`ttsp.batch.worker.payload_for`.
    scheduler : str or None
        Address of the scheduler (``"tcp://host:8786"``), used when ``client`` is None.
    client : distributed.Client or None
        A connected client to use (it is not closed).
    task : callable
        ``task(payload) -> row`` (:func:`ttsp.batch.worker.build_one`).
    on_done : callable
        Called with each row, in this process.
    """
    distributed, client, own = _dask_client(scheduler, client)
    token = uuid.uuid4().hex[:12]
    futures = {}
    try:
        for i, payload in enumerate(payloads):
            fut = client.submit(task, payload, key=f"ttsp-batch-{token}-{i}", pure=False)
            futures[fut] = payload
        for fut in distributed.as_completed(list(futures)):
            payload = futures[fut]
            try:
                row = fut.result()
            except Exception as exc:  # KilledWorker (the worker died) and the like
                row = failed_row(payload, f"the Dask worker failed: {type(exc).__name__}: "
                                          f"{error_text(exc)}")
            on_done(row)
    except BaseException:
        with contextlib.suppress(Exception):
            client.cancel(list(futures))
        raise
    finally:
        if own:
            with contextlib.suppress(Exception):
                client.close()
