"""``reviewapp open [PATH]``: the workbench window.

``reviewapp`` and ``reviewapp PATH`` do the same.
"""

from __future__ import annotations

import argparse
import ctypes.util
import os
import sys
from pathlib import Path

from reviewapp.core.errors import ReviewError

# Same values as reviewapp.ui.paper / layouts; repeated here so headless subcommands can build the
# parser without importing Qt (tests/ui checks they agree).
SPEEDS = (12.5, 25.0, 50.0, 100.0)
GAINS = (2.5, 5.0, 10.0, 20.0, 40.0)
LAYOUT_CHOICES = ("12x1", "6x2", "3x4+1", "3x4+3", "median")
# Libraries Qt's xcb platform plugin needs beyond a bare X client (Qt >= 6.5 adds xcb-cursor).
XCB_LIBS = {
    "xcb-cursor": "libxcb-cursor0",
    "xkbcommon-x11": "libxkbcommon-x11-0",
    "xcb-icccm": "libxcb-icccm4",
    "xcb-keysyms": "libxcb-keysyms1",
    "xcb-shape": "libxcb-shape0",
    "xcb-render-util": "libxcb-render-util0",
    "xcb-image": "libxcb-image0",
}


def add_parser(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "open",
        help="open the workbench window (default when no command is given)",
        description="Open the ECG review window on a record file or a folder of records. "
        "Without PATH, the bundled sample records open.",
    )
    p.add_argument("path", nargs="?", type=Path, metavar="PATH", help="record file or folder")
    p.add_argument(
        "--speed",
        type=float,
        choices=SPEEDS,
        metavar="MM_S",
        help="paper speed in mm/s: 12.5, 25, 50 or 100",
    )
    p.add_argument(
        "--gain",
        type=float,
        choices=GAINS,
        metavar="MM_MV",
        help="gain in mm/mV: 2.5, 5, 10, 20 or 40",
    )
    p.add_argument("--layout", choices=LAYOUT_CHOICES, help="page layout (or the median-beat view)")
    p.add_argument(
        "--second-reader",
        action="store_true",
        help="read blinded as second reader: the first reader's marks, values and notes are "
        "never shown",
    )
    p.add_argument(
        "--hide-automatic",
        action="store_true",
        help="with --second-reader: do not offer the automatic marks' values either",
    )


def qt_platform_problem(
    env: dict[str, str] | None = None, platform: str | None = None
) -> str | None:
    """Why the window cannot open here, in words; None when it should.

    Checked before QApplication exists, because a missing platform plugin aborts the process
    with a C++ message instead of an exception.
    """
    env = dict(os.environ if env is None else env)
    platform = platform or sys.platform
    qpa = env.get("QT_QPA_PLATFORM", "").split(":")[0].strip().lower()
    if qpa in ("offscreen", "minimal", "vnc", "eglfs", "linuxfb"):
        return None
    if not platform.startswith("linux"):
        return None
    if qpa == "wayland" or (not qpa and env.get("WAYLAND_DISPLAY")):
        return None
    if not env.get("DISPLAY"):
        return (
            "cannot open the window: no display (neither DISPLAY nor WAYLAND_DISPLAY is set). "
            "Run it in a desktop session, or use the headless commands (reviewapp info / measure "
            "/ batch / export); for screenshots without a screen set QT_QPA_PLATFORM=offscreen."
        )
    missing = [pkg for lib, pkg in XCB_LIBS.items() if ctypes.util.find_library(lib) is None]
    if missing:
        return (
            "cannot open the window: Qt's X11 (xcb) platform plugin needs libraries that are not "
            f"installed: {', '.join(missing)}. Install them, e.g. "
            f"'sudo apt-get install {' '.join(missing)}', or run with QT_QPA_PLATFORM=wayland on "
            "a Wayland desktop, or QT_QPA_PLATFORM=offscreen for a window without a screen."
        )
    return None


def run(args: argparse.Namespace) -> int:
    path = getattr(args, "path", None)
    if path is not None and not Path(path).exists():
        raise ReviewError("no such file or folder", path)
    second = bool(getattr(args, "second_reader", False))
    hide = bool(getattr(args, "hide_automatic", False))
    if hide and not second:
        raise ReviewError("--hide-automatic is for a blinded second read; add --second-reader")
    problem = qt_platform_problem()
    if problem:
        print(f"reviewapp: {problem}", file=sys.stderr)
        return 2
    from reviewapp.ui.app import run_app

    return run_app(
        Path(path) if path is not None else None,
        speed_mm_per_s=args.speed,
        gain_mm_per_mv=args.gain,
        layout=args.layout,
        second_reader=second,
        hide_automatic=hide,
    )
