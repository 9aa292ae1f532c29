"""Report the fuzz count in the terminal summary (the lead quotes it)."""

from __future__ import annotations


def pytest_terminal_summary(terminalreporter, exitstatus, config) -> None:
    line = getattr(config, "reviewapp_fuzz_line", None)
    if line:
        terminalreporter.write_sep("-", "reviewapp io fuzzing")
        terminalreporter.write_line(line)
