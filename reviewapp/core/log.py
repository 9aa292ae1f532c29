"""The log file: where third-party warnings go instead of the terminal.

A user of ``reviewapp measure`` or ``batch`` must see one line per problem, ours; a numpy
"Mean of empty slice", a pandas deprecation inside wfdb or a Dask notice is noise on the
terminal, but worth keeping for a bug report. ``capture_warnings`` routes every Python warning
(``warnings.warn``, in this process and in batch workers) to ``<cache>/reviewapp.log`` and
never to stderr. Writing the log never fails the command: if it cannot be written the warning
is dropped.
"""

from __future__ import annotations

import logging
import os
from pathlib import Path

LOG_NAME = "reviewapp.log"
_LOGGER = "py.warnings"  # the logger logging.captureWarnings writes to


def cache_dir() -> Path:
    """The user cache folder of reviewapp (``$XDG_CACHE_HOME/reviewapp`` or ~/.cache/...)."""
    base = os.environ.get("XDG_CACHE_HOME") or os.environ.get("LOCALAPPDATA")
    return (Path(base) if base else Path.home() / ".cache") / "reviewapp"


def log_path() -> Path:
    return cache_dir() / LOG_NAME


class _QuietFileHandler(logging.FileHandler):
    """Appends to the log, creating its folder on first use; never reports its own failures
    on stderr (logging's default prints a traceback there)."""

    def emit(self, record: logging.LogRecord) -> None:
        try:
            Path(self.baseFilename).parent.mkdir(parents=True, exist_ok=True)
        except OSError:
            return
        super().emit(record)

    def handleError(self, record: logging.LogRecord) -> None:
        pass


def capture_warnings(path: Path | None = None) -> Path:
    """Send every Python warning of this process to the log file ``path`` (default
    ``log_path()``), not to the terminal. Idempotent; returns the log path."""
    path = Path(path) if path is not None else log_path()
    logger = logging.getLogger(_LOGGER)
    for h in list(logger.handlers):
        if isinstance(h, _QuietFileHandler):
            if Path(h.baseFilename) == path.absolute():
                logging.captureWarnings(True)
                return path
            logger.removeHandler(h)
            h.close()
    handler = _QuietFileHandler(path, mode="a", encoding="utf-8", delay=True)
    handler.setFormatter(
        logging.Formatter("%(asctime)s process %(process)d: %(message)s", "%Y-%m-%dT%H:%M:%S")
    )
    logger.addHandler(handler)
    logger.propagate = False
    logging.captureWarnings(True)
    return path
