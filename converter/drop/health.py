"""The watcher's log, and its back-off while the drop folder cannot be used."""

from __future__ import annotations

import logging
import logging.handlers
import time
from pathlib import Path

from converter.drop.plan import FULL_ERRNOS
from converter.values import printable


class PrintableFormatter(logging.Formatter):
    """A formatter whose lines have their control characters escaped (:func:`printable`):
    a file name or a cell's text in a message cannot drive the terminal or forge the log,
    and a file name that is not UTF-8 is written as its bytes' escapes."""

    def format(self, record: logging.LogRecord) -> str:
        return printable(super().format(record))


def new_logger() -> logging.Logger:
    """A private logger of one watcher, with no output yet (see :func:`open_log`)."""
    logger = logging.getLogger(f"pertbook.watch.{id(object())}")
    logger.setLevel(logging.INFO)
    logger.propagate = False
    return logger


def open_log(logger: logging.Logger, log_path: Path | None, *, echo: bool = True) -> None:
    """Send ``logger`` to a rotating ``log_path`` (1 MB x 5) and, if ``echo``, to stderr."""
    fmt = PrintableFormatter("%(asctime)s  %(levelname)-7s  %(message)s", "%Y-%m-%d %H:%M:%S")
    if log_path is not None:
        handler = logging.handlers.RotatingFileHandler(
            log_path, maxBytes=1_000_000, backupCount=5, encoding="utf-8", delay=True
        )
        handler.setFormatter(fmt)
        logger.addHandler(handler)
    if echo:
        stream = logging.StreamHandler()
        stream.setFormatter(fmt)
        logger.addHandler(stream)


def close_logger(logger: logging.Logger) -> None:
    """Close and detach every handler (the log file is released)."""
    for handler in list(logger.handlers):
        handler.close()
        logger.removeHandler(handler)


def describe(exc: BaseException) -> str:
    """Plain words for an error, with the path it concerns; a full disk says so."""
    if isinstance(exc, OSError):
        words = exc.strerror or str(exc)
        where = f" ({exc.filename})" if exc.filename else ""
        if exc.errno in FULL_ERRNOS:
            words = "the disk is full"
        return f"{words}{where}"
    return str(exc)


class Health:
    """Whether the drop folder is usable, when to look again, when work last moved on.

    After each trouble the next poll waits twice as long as the one before, from the
    poll interval up to ``max_backoff`` seconds (exponential back-off, common practice);
    the first poll that goes through resets it.
    """

    def __init__(self, interval: float, max_backoff: float, log: logging.Logger) -> None:
        self.interval = interval
        self.max_backoff = max_backoff
        self.log = log
        self.healthy = True
        self.level = 0
        self.next_poll = 0.0
        self.last_progress = time.monotonic()

    def trouble(self, what: str, exc: BaseException) -> None:
        """Log the trouble and put the next poll off."""
        delay = min(self.max_backoff, self.interval * (2**self.level))
        self.level = min(self.level + 1, 30)
        self.healthy = False
        self.next_poll = time.monotonic() + delay
        self.log.error("%s: %s; retrying in %.3g s", what, describe(exc), delay)

    def recovered(self) -> None:
        """A poll went through: back to the normal interval."""
        if not self.healthy:
            self.log.info("the drop folder is usable again; carrying on")
        self.healthy = True
        self.level = 0
        self.next_poll = time.monotonic() + self.interval

    def progressed(self) -> None:
        """A file was claimed or placed (``--once`` gives up only after a quiet spell)."""
        self.last_progress = time.monotonic()
