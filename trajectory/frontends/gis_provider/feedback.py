"""Bridge between the library's progress callback / logging and a processing feedback."""

from __future__ import annotations

import logging

from ...errors import RunCancelled


class FeedbackProgress:
    """A :data:`trajectory.assess.ProgressCallback` that reports to a QgsProcessingFeedback.

    Raises :class:`~trajectory.errors.RunCancelled` once the user has cancelled, so the
    run stops before anything is written.
    """

    def __init__(self, feedback):
        self.feedback = feedback

    def check(self) -> None:
        if self.feedback is not None and self.feedback.isCanceled():
            raise RunCancelled("cancelled by the user; no output was written")

    def __call__(self, done: int, total: int) -> None:
        self.check()
        if self.feedback is not None and total:
            self.feedback.setProgress(100.0 * done / total)


class FeedbackLogHandler(logging.Handler):
    """Send trajectory's log records to the processing log."""

    def __init__(self, feedback):
        super().__init__(level=logging.INFO)
        self.feedback = feedback

    def emit(self, record: logging.LogRecord) -> None:
        text = self.format(record)
        if record.levelno >= logging.WARNING:
            self.feedback.reportError(text, False)
        else:
            self.feedback.pushInfo(text)
