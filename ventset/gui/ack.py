"""First-run acknowledgement: what ventset is and is not, confirmed once and remembered."""

from __future__ import annotations

from PySide6.QtWidgets import QCheckBox, QDialog, QDialogButtonBox, QLabel, QVBoxLayout, QWidget

from ventset.gui.theme import scaled_font
from ventset.model import STANDING_NOTICE

EXPLANATION = (
    "ventset drafts starting ventilator settings from population averages: body mass, an estimated or "
    "measured metabolic rate, the species' usual ranges and the dead space of the breathing system you "
    "enter. It cannot see the patient. Lung disease, obesity, positioning, surgery, drugs and equipment "
    "faults change what the patient needs.\n\n"
    "Use the numbers as a first guess, then adjust them to live monitoring: capnography, pulse oximetry, "
    "arterial blood gases, airway pressures, blood pressure and the movement of the chest or keel. "
    "Cautions say what looks risky and why; an absent caution does not mean a setting is safe."
)


class AcknowledgementDialog(QDialog):
    """Shown on first run (and from Help). Start is enabled only after the box is ticked."""

    def __init__(self, parent: QWidget | None = None, review: bool = False) -> None:
        super().__init__(parent)
        self.setWindowTitle("Before you start")
        self.setObjectName("acknowledgement")
        lay = QVBoxLayout(self)
        head = QLabel("A starting point, not a prescription", self)
        head.setFont(scaled_font(self.font(), 1.3, bold=True))
        lay.addWidget(head)
        notice = QLabel(STANDING_NOTICE, self)
        notice.setWordWrap(True)
        notice.setFont(scaled_font(self.font(), 1.05, bold=True))
        lay.addWidget(notice)
        for paragraph in EXPLANATION.split("\n\n"):
            body = QLabel(paragraph, self)
            body.setWordWrap(True)
            lay.addWidget(body)
        self.check = QCheckBox("I have read this and understand it", self)
        self.check.setAccessibleDescription("The attending licensed veterinarian decides the settings, and they "
                                            "are titrated to live monitoring.")
        lay.addWidget(self.check)
        buttons = QDialogButtonBox(self)
        if review:
            self.start = buttons.addButton("Close", QDialogButtonBox.ButtonRole.AcceptRole)
            self.check.setChecked(True)
            self.check.setEnabled(False)
        else:
            self.start = buttons.addButton("Start", QDialogButtonBox.ButtonRole.AcceptRole)
            buttons.addButton("Quit", QDialogButtonBox.ButtonRole.RejectRole)
            self.start.setEnabled(False)
            self.check.toggled.connect(self.start.setEnabled)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        width = self.fontMetrics().averageCharWidth() * 72
        self.setMinimumWidth(width)
        self.resize(width, lay.totalHeightForWidth(width))
