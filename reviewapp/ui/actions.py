"""Every command of the main window, declared as data: text, shortcut, checkable, tip and the
handler it calls (a dotted path from the window: ``"view.step_speed"`` is
``window.view.step_speed``), and where it sits in the menus and on the toolbar.

``build_actions`` makes the QActions. ``triggered`` carries a checked flag; it is passed on
only to checkable actions without an argument, so a command never receives ``False`` where it
expects something else.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from functools import reduce

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.core.workflow import READ_MODES, ReadMode
from reviewapp.ui.layouts import LAYOUTS

K = QtGui.QKeySequence.StandardKey
Key = QtCore.Qt.Key
Shortcut = str | QtGui.QKeySequence.StandardKey | QtCore.Qt.Key | None


@dataclass(frozen=True)
class ActionSpec:
    """One command. ``arg``: the handler is called with it (else with nothing, or with the
    checked flag when ``checkable``). ``group``: checkable actions of one group exclude each
    other."""

    name: str
    text: str
    handler: str
    shortcut: Shortcut = None
    checkable: bool = False
    tip: str = ""
    arg: object = None
    group: str = ""


A = ActionSpec
ROLE_TEXT = {
    ReadMode("first"): "First reader",
    ReadMode("second", True, True): "Second reader (blinded)",
    ReadMode("second", True, False): "Second reader (blinded, automatic marks hidden)",
    ReadMode("adjudicator"): "Adjudicator",
}
ACTIONS: tuple[ActionSpec, ...] = (
    # File
    A("open", "&Open record…", "open_dialog", K.Open),
    A("open_folder", "Open &folder…", "open_folder_dialog", "Ctrl+Shift+O"),
    A(
        "open_second",
        "Open as second reader (blinded)…",
        "open_second_dialog",
        tip="Open a record blinded: the first reader's marks, values and notes stay hidden",
    ),
    *(
        A(f"role_{i}", ROLE_TEXT[m], "adapter.set_read_mode", checkable=True, arg=m, group="role")
        for i, m in enumerate(READ_MODES)
    ),
    A("reader", "Reader…", "adapter.choose_reader", tip="Your reviewer id for marks and sign-off"),
    A("next_unread", "Next unread record", "records.next_unread", "N", arg=+1),
    A("prev_unread", "Previous unread record", "records.next_unread", "Shift+N", arg=-1),
    A("export_pdf", "Report page as PDF…", "exports.run", "Ctrl+E", arg="export_pdf"),
    A("export_image", "Report page as image…", "exports.run", arg="export_image"),
    A("export_csv", "Measurements as CSV…", "exports.run", arg="export_csv"),
    A("export_wfdb", "Marks as WFDB annotations", "exports.run", arg="export_wfdb"),
    A("print", "Print report…", "exports.run", K.Print, arg="print_report"),
    A("quit", "&Quit", "close", "Ctrl+Q"),  # StandardKey.Quit is empty on Windows
    # Edit
    A("undo", "Undo", "adapter.undo", K.Undo),
    A("redo", "Redo", "adapter.redo", "Ctrl+Shift+Z"),
    A("reset_marks", "Reset all marks to automatic", "adapter.reset_all", "Ctrl+Shift+R"),
    A("add_note", "Add note…", "adapter.add_note"),
    A(
        "sign_off",
        "Sign off reading…",
        "adapter.sign_off",
        tip="Confirm the values and sign this reading off under your reader id",
    ),
    A(
        "time_cal",
        "Time caliper",
        "calipers.add",
        "C",
        tip="New time caliper: ms and bpm",
        arg="time",
    ),
    A(
        "amp_cal",
        "Amplitude caliper",
        "calipers.add",
        "A",
        tip="New amplitude caliper: mV and mm",
        arg="amplitude",
    ),
    A(
        "march",
        "March-out",
        "calipers.toggle_march",
        "M",
        tip="Repeat the selected time caliper along the strip",
    ),
    A("delete", "Delete caliper", "calipers.delete_selected", Key.Key_Delete),
    # Edit > Interpretation (the reader's statements; ui/interpretation_panel.py)
    A(
        "stmt_add",
        "Add statement from catalogue…",
        "interpretation.add_from_catalogue",
        "Ctrl+I",
        tip="Search the statement catalogue and add a statement to your interpretation",
    ),
    A("stmt_free", "Add statement in own words…", "interpretation.add_own_words"),
    A(
        "stmt_auto",
        "Start from automatic statements",
        "interpretation.use_automatic",
        tip="Add the automatic statements to your interpretation (not in a read that hides "
        "the automatic marks)",
    ),
    A("stmt_edit", "Edit statement…", "interpretation.edit_selected"),
    A("stmt_remove", "Remove statement", "interpretation.remove_selected"),
    A("stmt_up", "Move statement up", "interpretation.move", arg=-1),
    A("stmt_down", "Move statement down", "interpretation.move", arg=+1),
    # View
    *(
        A(f"layout_{key}", text, "view.set_layout", str(i + 1), True, arg=key, group="layout")
        for i, (key, text) in enumerate(LAYOUTS.items())
    ),
    A(
        "median",
        "&Median beat",
        "view.show_median",
        "B",
        True,
        "Each lead's representative (median) beat with the global marks",
    ),
    A(
        "median_auto",
        "Median beat sized to the page",
        "view.set_median_automatic",
        tip="Show the median beats below the page, taking the height the page leaves (at "
        "least a readable strip, whatever the gain and layout)",
    ),
    A(
        "superimpose",
        "Superimpose beats",
        "view.set_superimpose",
        "Shift+B",
        True,
        "Draw every dominant beat under the median beat",
    ),
    A("cabrera", "Cabrera lead order", "view.set_cabrera", "Ctrl+L", True),
    A("slower", "Slower paper", "view.step_speed", "[", arg=-1),
    A("faster", "Faster paper", "view.step_speed", "]", arg=+1),
    A("gain_down", "Lower gain", "view.step_gain", "-", arg=-1),
    A("gain_up", "Higher gain", "view.step_gain", "=", arg=+1),
    A("zoom_in", "Zoom in", "view.zoom_by", "Ctrl+=", arg=1.25),
    A("zoom_out", "Zoom out", "view.zoom_by", "Ctrl+-", arg=0.8),
    A(
        "true",
        "True size",
        "view.true_size",
        "Ctrl+0",
        tip="1 mm of paper = 1 mm on the screen (see Tools ▸ Calibrate)",
    ),
    A("fit", "Fit page", "view.fit_page", "F"),
    A("prev", "Previous page", "view.step_page", Key.Key_PageUp, arg=-1),
    A("next", "Next page", "view.step_page", Key.Key_PageDown, arg=+1),
    A("first", "First page", "view.go_page", Key.Key_Home, arg=0),
    A("last", "Last page", "view.go_page", Key.Key_End, arg=10**12),
    A("theme", "Dark theme", "view.set_dark", "Ctrl+T", True),
    # Filters (display only)
    A(
        "f_base",
        "Baseline filter",
        "view.filters_changed",
        "Alt+1",
        True,
        "Display only: high-pass 0.5 Hz",
    ),
    A(
        "f_mains",
        "Mains filter",
        "view.filters_changed",
        "Alt+2",
        True,
        "Display only: notch at the mains frequency",
    ),
    A(
        "f_low",
        "Low-pass filter",
        "view.filters_changed",
        "Alt+3",
        True,
        "Display only: low-pass 40 Hz",
    ),
    A(
        "f_centre",
        "Centre baselines",
        "view.filters_changed",
        "Alt+4",
        True,
        "Display only: each lead drawn with its baseline on its row (a large DC offset is not "
        "drawn off the page); amplitudes and values are unchanged",
    ),
    # Tools, Help
    A(
        "compare",
        "Compare readings…",
        "adapter.open_compare",
        tip="Both readers' values side by side; an adjudicator records final values",
    ),
    A("calibrate", "Calibrate screen scale…", "view.calibrate"),
    A("help", "Keyboard shortcuts", "toggle_help", "F1"),
    A("about", "About reviewapp", "about"),
    # Keys of the paper only (no menu entry)
    A("tab", "Next caliper part", "calipers.cycle_part", Key.Key_Tab),
    A("left", "Nudge left", "selection.nudge", Key.Key_Left, arg=(-1, 0)),
    A("right", "Nudge right", "selection.nudge", Key.Key_Right, arg=(+1, 0)),
    A("up", "Nudge up", "selection.nudge", Key.Key_Up, arg=(0, +1)),
    A("down", "Nudge down", "selection.nudge", Key.Key_Down, arg=(0, -1)),
)

# Menus: action names, "-" a separator, ("title", (...)) a submenu, "dock:<name>" a dock's
# show/hide action.
MENUS: tuple[tuple[str, tuple[object, ...]], ...] = (
    (
        "&File",
        (
            "open",
            "open_folder",
            "open_second",
            ("Reading role", tuple(f"role_{i}" for i in range(len(READ_MODES)))),
            "reader",
            "-",
            "next_unread",
            "prev_unread",
            "-",
            ("Export reading", ("export_pdf", "export_image", "export_csv", "export_wfdb")),
            "print",
            "-",
            "quit",
        ),
    ),
    (
        "&Edit",
        (
            "undo",
            "redo",
            "reset_marks",
            "-",
            "add_note",
            "sign_off",
            (
                "Interpretation",
                (
                    "stmt_add",
                    "stmt_free",
                    "stmt_auto",
                    "-",
                    "stmt_edit",
                    "stmt_remove",
                    "stmt_up",
                    "stmt_down",
                ),
            ),
            "-",
            "time_cal",
            "amp_cal",
            "march",
            "delete",
        ),
    ),
    (
        "&View",
        (
            *(f"layout_{k}" for k in LAYOUTS),
            "-",
            "median",
            "median_auto",
            "superimpose",
            "cabrera",
            "-",
            "slower",
            "faster",
            "gain_down",
            "gain_up",
            "zoom_in",
            "zoom_out",
            "true",
            "fit",
            "-",
            "prev",
            "next",
            "first",
            "last",
            "-",
            "theme",
            "dock:reading",
            "dock:interpretation",
            "dock:measurements",
            "dock:records",
            "dock:keyboard",
        ),
    ),
    ("Fi&lters", ("f_base", "f_mains", "f_low", "-", "f_centre")),
    ("&Tools", ("compare", "calibrate")),
    ("&Help", ("help", "about")),
)
# The toolbar: frequent actions only, so they all fit at 1600 px; "|" a separator, "@view"
# the speed / gain / layout / rhythm boxes, "@filters" the display-filter button.
TOOLBAR: tuple[str, ...] = (
    "open",
    "|",
    "@view",
    "|",
    "median",
    "|",
    "time_cal",
    "amp_cal",
    "|",
    "true",
    "fit",
    "|",
    "@filters",
    "|",
    "sign_off",
)


def resolve(owner: object, path: str) -> Callable[..., object]:
    """``owner.a.b`` for ``"a.b"``, looked up when the action fires (components may be
    replaced after the actions are made)."""
    fn = reduce(getattr, path.split("."), owner)
    assert callable(fn), path
    return fn


def _call(owner: object, spec: ActionSpec, checked: bool) -> None:
    fn = resolve(owner, spec.handler)
    if spec.arg is not None:
        fn(spec.arg)
    elif spec.checkable:
        fn(checked)
    else:
        fn()


def build_actions(
    owner: QtWidgets.QWidget, specs: Iterable[ActionSpec] = ACTIONS
) -> dict[str, QtGui.QAction]:
    """One QAction per spec, added to ``owner`` (so its shortcut works anywhere in it)."""
    out: dict[str, QtGui.QAction] = {}
    groups: dict[str, QtGui.QActionGroup] = {}
    for spec in specs:
        act = QtGui.QAction(spec.text, owner)
        act.setObjectName(f"act_{spec.name}")
        if spec.shortcut is not None:
            act.setShortcut(QtGui.QKeySequence(spec.shortcut))
            act.setShortcutContext(QtCore.Qt.ShortcutContext.WindowShortcut)
        act.setCheckable(spec.checkable)
        if spec.tip:
            act.setToolTip(spec.tip)
            act.setStatusTip(spec.tip)
        if spec.group:
            groups.setdefault(spec.group, QtGui.QActionGroup(owner)).addAction(act)
        act.triggered.connect(lambda checked=False, s=spec: _call(owner, s, bool(checked)))
        owner.addAction(act)
        out[spec.name] = act
    return out


def build_menus(
    menubar: QtWidgets.QMenuBar,
    actions: dict[str, QtGui.QAction],
    docks: dict[str, QtWidgets.QDockWidget],
) -> None:
    def fill(menu: QtWidgets.QMenu, items: Iterable[object]) -> None:
        for item in items:
            if item == "-":
                menu.addSeparator()
            elif isinstance(item, tuple):
                sub = QtWidgets.QMenu(item[0], menu)
                menu.addMenu(sub)
                fill(sub, item[1])
            elif isinstance(item, str) and item.startswith("dock:"):
                menu.addAction(docks[item[5:]].toggleViewAction())
            else:
                menu.addAction(actions[str(item)])

    for title, items in MENUS:
        menu = QtWidgets.QMenu(title, menubar)
        menubar.addMenu(menu)
        fill(menu, items)


def build_toolbar(
    window: QtWidgets.QMainWindow,
    actions: dict[str, QtGui.QAction],
    widgets: dict[str, QtWidgets.QWidget],
) -> QtWidgets.QToolBar:
    tb = window.addToolBar("Paper")
    tb.setObjectName("toolbar_paper")
    tb.setMovable(False)
    for item in TOOLBAR:
        if item == "|":
            tb.addSeparator()
        elif item.startswith("@"):
            tb.addWidget(widgets[item[1:]])
        else:
            tb.addAction(actions[item])
    return tb
