"""Help in the window: the bundled user guide (and the other documents) in a reader, and the About box.

The documents are the project's own Markdown files (ventset.resources.docs_dir), shown by Qt's QTextBrowser,
which reads Markdown and follows the links between them; links to the web open in the system browser.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, QUrl
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from ventset.gui.text import plain
from ventset.resources import docs_dir

# The documents offered in the reader, in this order (file name, title).
DOCUMENTS = (("user-guide.md", "User guide"), ("titration.md", "During the anaesthetic (titration)"),
             ("equations.md", "Equations and their sources"), ("validation.md", "The model beside published data"),
             ("case-format.md", "Case files"), ("plan-json.md", "The plan as JSON"))


class GuideWindow(QDialog):
    """A reader for the bundled documents: back, forward, the list of documents, links followed inside."""

    def __init__(self, parent: QWidget | None = None, folder: Path | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("guide-window")
        self.setWindowTitle("ventset — User guide")
        self.folder = folder or docs_dir()
        lay = QVBoxLayout(self)
        bar = QHBoxLayout()
        self.back = QPushButton("Back", self)
        self.forward = QPushButton("Forward", self)
        self.choose = QComboBox(self)
        self.choose.setObjectName("guide-documents")
        self.choose.setAccessibleName("Document")
        for name, title in DOCUMENTS:
            if (self.folder / name).is_file():
                self.choose.addItem(title, name)
        bar.addWidget(self.back)
        bar.addWidget(self.forward)
        bar.addWidget(self.choose, 1)
        lay.addLayout(bar)
        self.browser = QTextBrowser(self)
        self.browser.setObjectName("guide-text")
        self.browser.setAccessibleName("User guide text")
        self.browser.setOpenExternalLinks(True)
        self.browser.setSearchPaths([str(self.folder)])
        lay.addWidget(self.browser, 1)
        self.back.clicked.connect(self.browser.backward)
        self.forward.clicked.connect(self.browser.forward)
        self.browser.backwardAvailable.connect(self.back.setEnabled)
        self.browser.forwardAvailable.connect(self.forward.setEnabled)
        self.choose.activated.connect(lambda i: self.show_document(self.choose.itemData(i)))
        self.back.setEnabled(False)
        self.forward.setEnabled(False)
        m = self.fontMetrics()
        self.resize(m.averageCharWidth() * 110, m.height() * 40)
        self.show_document(DOCUMENTS[0][0])

    def show_document(self, name: str) -> bool:
        path = self.folder / name
        if not path.is_file():
            self.browser.setPlainText(f"The document {name} is not installed here ({self.folder}). The same text is "
                                      "in the docs folder of ventset's source.")
            return False
        self.browser.setSource(QUrl.fromLocalFile(str(path)))
        i = self.choose.findData(name)
        if i >= 0:
            self.choose.setCurrentIndex(i)
        return True


def show_guide(window) -> GuideWindow:
    """Open (or bring forward) the guide reader beside the window."""
    guide = getattr(window, "_guide", None)
    if guide is None:
        guide = GuideWindow(window)
        guide.setWindowIcon(window.windowIcon())
        window._guide = guide
    guide.show()
    guide.raise_()
    guide.activateWindow()
    return guide


class AboutDialog(QDialog):
    """Version and licence, what ventset is for, the standing notice, and where the data's numbers come from."""

    def __init__(self, window) -> None:
        from ventset.about import about_lines

        super().__init__(window)
        self.setObjectName("about-dialog")
        self.setWindowTitle("About ventset")
        self.setWindowIcon(window.windowIcon())
        lay = QVBoxLayout(self)
        head = QHBoxLayout()
        icon = QLabel(self)
        size = self.fontMetrics().height() * 4
        icon.setPixmap(window.windowIcon().pixmap(size, size))
        head.addWidget(icon)
        self.paragraphs = about_lines(window.library)
        title = plain(QLabel(self.paragraphs[0], self))
        font = title.font()
        font.setBold(True)
        font.setPointSizeF(font.pointSizeF() * 1.3)
        title.setFont(font)
        head.addWidget(title, 1)
        lay.addLayout(head)
        for i, text in enumerate(self.paragraphs[1:], start=1):
            label = plain(QLabel(text, self))
            label.setObjectName(f"about-{i}")
            label.setWordWrap(True)
            label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
            if i == 2:  # the standing notice
                bold = label.font()
                bold.setBold(True)
                label.setFont(bold)
            lay.addWidget(label)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close, self)
        guide = buttons.addButton("User guide", QDialogButtonBox.ButtonRole.HelpRole)
        guide.clicked.connect(lambda: show_guide(window))
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        self.resize(self.fontMetrics().averageCharWidth() * 80, self.sizeHint().height())


def install_help(window, menu) -> None:
    """Help ▸ User guide (F1) and About ventset, in the window's Help menu."""
    guide = menu.addAction("User guide")
    guide.setObjectName("act-guide")
    guide.setShortcut(QKeySequence(QKeySequence.StandardKey.HelpContents))
    guide.triggered.connect(lambda: show_guide(window))
    window.act_guide = guide
    about = menu.addAction("About ventset")
    about.setObjectName("act-about")
    about.triggered.connect(lambda: AboutDialog(window).open())
    window.act_about = about
