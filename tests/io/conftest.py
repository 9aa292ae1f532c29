"""Report the fuzz count in the terminal summary (shown when the io tests run in one process,
`-n 0`: pytest-xdist workers keep their own config)."""

from __future__ import annotations


def pytest_terminal_summary(terminalreporter, exitstatus, config) -> None:
    lines = [getattr(config, k, None) for k in ("reviewapp_fuzz_line", "reviewapp_rss_line")]
    if any(lines):
        terminalreporter.write_sep("-", "reviewapp io fuzzing")
        for line in lines:
            if line:
                terminalreporter.write_line(line)
