"""The folder job on Dask's distributed scheduler (the optional extra `cluster`).

Each case is one task running `verify.batch.worker.check_job` on a Dask worker: the worker needs
truss-verify installed and the case files at the same absolute paths (a shared file system, as a
nightly audit over a drawings server has). Results come back to this process, which writes every
output, exactly as the local run does; so the summary is the same whichever ran the cases.
"""

from __future__ import annotations

from collections.abc import Iterator
from types import TracebackType
from typing import Any

from verify.batch.jobs import Job
from verify.batch.worker import FAULT, CaseResult, check_job

INSTALL_HINT = (
    "--scheduler needs Dask's distributed scheduler, an optional extra: pip install "
    "'truss-verify[cluster]'"
)
CONNECT_TIMEOUT = "10s"  # an address that answers nothing is refused in seconds, not the default 30


class SchedulerError(ValueError):
    """The scheduler cannot be used: the extra is not installed or the address does not answer."""


class DaskRunner:
    """A runner (see verify.batch.run.Runner) that sends every job to a Dask scheduler.

    Use as a context manager: entering connects (SchedulerError when it cannot), leaving closes."""

    def __init__(self, address: str) -> None:
        self.address = address
        self._client: Any = None

    def __enter__(self) -> DaskRunner:
        try:
            from distributed import Client
        except ImportError:
            raise SchedulerError(INSTALL_HINT) from None
        try:
            self._client = Client(self.address, timeout=CONNECT_TIMEOUT)
        except (OSError, TimeoutError, ValueError, TypeError) as exc:
            raise SchedulerError(
                f"--scheduler: cannot reach a Dask scheduler at '{self.address}' ({exc})"
            ) from None
        return self

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        trace: TracebackType | None,
    ) -> None:
        if self._client is not None:
            self._client.close()
            self._client = None

    def __call__(self, jobs: list[Job]) -> Iterator[CaseResult]:
        from distributed import as_completed

        if not jobs:
            return
        # pure=False: the same job twice (a rerun after a file changed) must run again, not be
        # served from the scheduler's memory of an identical call.
        futures = {self._client.submit(check_job, job, pure=False): job for job in jobs}
        for future in as_completed(list(futures)):
            try:
                yield future.result()
            except Exception as exc:  # noqa: BLE001 - a worker lost or killed: that case is reported, the rest go on
                yield CaseResult(
                    futures[future].name,
                    FAULT,
                    reason=f"the Dask worker running this case failed ({type(exc).__name__}: "
                    f"{exc})",
                )
