"""How committed job rows reach whatever runs them: the one interface the API, the sweeper and the
in-process runner share.

A dispatcher takes job ids whose rows are committed as ``queued`` and hands them on: to the broker (the
Celery dispatcher in :mod:`workers.celery_app`) or to the runner threads of this process
(:class:`workers.background.InProcessRunner`). It returns the ids it could not hand on; those rows stay
queued and become the sweeper's to send again.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol, runtime_checkable

__all__ = ["Dispatcher", "QueueDispatcher"]


class Dispatcher(Protocol):
    """Hand committed job ids on; returns those that could not be handed on."""

    def __call__(self, job_ids: Sequence[int], /) -> list[int]: ...


@runtime_checkable
class QueueDispatcher(Dispatcher, Protocol):
    """A dispatcher whose messages can wait somewhere other than the job table (a broker queue)."""

    def backlog(self) -> int | None:
        """Messages waiting to be taken; None when that cannot be known now."""
        ...
