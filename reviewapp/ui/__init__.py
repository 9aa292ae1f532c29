"""Qt views over core (see DEVELOPERS.md)."""

import PySide6.QtCore  # noqa: F401  (loads PySide6's import hook, made cheaper just below)

from reviewapp.ui.import_hook import install

install()
