"""Paper sizes: the locale's (US Letter in the United States and Canada, ISO 216 A4 elsewhere) or the one
chosen in Case ▸ Paper size. Light on purpose: the menu is built at start-up, the printing modules are
loaded only when something is printed."""

from __future__ import annotations

import os

from PySide6.QtGui import QAction, QActionGroup
from PySide6.QtWidgets import QMenu

PAPERS = ("A4", "Letter")
# Where US Letter is the usual paper (the rest of the world uses ISO 216 A4); QLocale territory names.
LETTER_TERRITORIES = ("UnitedStates", "Canada")
PAPER_KEY = "print/paper"  # "auto" (from the locale), "A4" or "Letter"


def default_paper(locale_name: str | None = None) -> str:
    """'Letter' for a US or Canadian locale, else 'A4'. Without a name: the paper locale of the environment
    (LC_ALL, then LC_PAPER, then LANG, as POSIX orders them), else the system locale."""
    from PySide6.QtCore import QLocale

    if locale_name is None:
        locale_name = next((os.environ[v] for v in ("LC_ALL", "LC_PAPER", "LANG") if os.environ.get(v)), None)
    loc = QLocale(locale_name.split(".")[0].split("@")[0]) if locale_name else QLocale.system()
    letter = {getattr(QLocale.Country, t) for t in LETTER_TERRITORIES}
    return "Letter" if loc.territory() in letter else "A4"


def paper_choice(settings) -> str:
    value = str(settings.value(PAPER_KEY, "auto")) if settings is not None else "auto"
    return value if value in ("auto", *PAPERS) else "auto"


def chosen_paper(settings) -> str:
    """The paper to print on: the one chosen in Case ▸ Paper size, else the locale's."""
    choice = paper_choice(settings)
    return default_paper() if choice == "auto" else choice


def install_paper_menu(window, menu: QMenu, before: QAction | None) -> QMenu:
    """Case ▸ Paper size: from the locale (the default), A4 or Letter; remembered in the settings."""
    paper = QMenu("Paper size", window)
    paper.setObjectName("menu-paper")
    group = QActionGroup(window)
    settings = getattr(window, "settings", None)
    current = paper_choice(settings)
    actions: dict[str, QAction] = {}
    for key in ("auto", *PAPERS):
        text = f"From the locale ({default_paper()})" if key == "auto" else key
        a = QAction(text, window, checkable=True)
        a.setChecked(key == current)
        a.triggered.connect(lambda _=False, k=key: settings is not None and settings.setValue(PAPER_KEY, k))
        group.addAction(a)
        paper.addAction(a)
        actions[key] = a
    paper.paper_actions = actions
    menu.insertMenu(before, paper)
    return paper
