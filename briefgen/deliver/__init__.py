"""Deliver stage: publish the brief atomically under a lock, then optionally email it."""

from __future__ import annotations

from briefgen.deliver.lock import output_lock
from briefgen.deliver.publish import current_run, write_outputs

__all__ = ["current_run", "output_lock", "write_outputs"]
