"""Moved: a job with its file store lives in ``commission.job`` (the walk, the report and
verify all use it)."""

from ..job import FileStore, JobState

__all__ = ["FileStore", "JobState"]
