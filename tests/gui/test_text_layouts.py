"""ventset.gui.text.Text keeps a few layouts: a text shown again, or a height asked for the width it is painted at,
is not laid out again. Checked against a Text made fresh for each state (no layouts kept) and against Qt's own
QTextLayout height for the same text, font and width."""

from PySide6.QtGui import QTextLayout, QTextOption
from PySide6.QtWidgets import QWidget

from ventset.gui import text as text_module
from ventset.gui.text import Text

CAUTION = ("No setting inside the limits reaches PaCO2 40 mmHg; limited by the species' largest usual tidal volume "
           "and the species' highest usual rate. These settings are expected to give PaCO2 {} mmHg.")


def _shown(qtbot, text: str, wrap: bool) -> Text:
    host = QWidget()
    qtbot.addWidget(host)
    t = Text(text, host, wrap=wrap, markup=True)
    t.setGeometry(0, 0, 240, 120)
    host.resize(240, 120)
    host.show()
    qtbot.waitExposed(host)
    t._host = host  # kept alive with the text
    return t


def _qt_height(text: str, font, width: int) -> int:
    layout = QTextLayout(text, font)
    opt = QTextOption()
    opt.setWrapMode(QTextOption.WrapMode.WordWrap)
    layout.setTextOption(opt)
    layout.beginLayout()
    y = 0.0
    while (line := layout.createLine()).isValid():
        line.setLineWidth(width)
        y += line.height()
    layout.endLayout()
    return int(y + 0.999)


def test_texts_shown_again_draw_what_a_fresh_text_draws(qtbot):
    kept = _shown(qtbot, "", wrap=True)
    for value in ("92", "88.3", "92", "<b>88.3</b> now", "88.3", "92"):
        words = CAUTION.format(value)
        kept.setText(words)
        fresh = _shown(qtbot, words, wrap=True)
        assert kept.grab().toImage() == fresh.grab().toImage(), value


def test_one_layout_serves_the_height_and_the_paint(qtbot, monkeypatch):
    t = _shown(qtbot, CAUTION.format("92"), wrap=True)
    t.grab()
    made = []
    real = Text._make_layout
    monkeypatch.setattr(Text, "_make_layout", lambda self, width: made.append(width) or real(self, width))
    t.setText(CAUTION.format("88.3"))  # asks its height at its width, then is painted at that width
    t.grab()
    assert made == [240]
    assert t.heightForWidth(240) == max(t._reserved(), _qt_height(CAUTION.format("88.3"), t.font(), 240))
    for w in range(100, 100 + 10 * text_module._LAYOUTS_KEPT * 3, 10):  # a layout pass asking many widths
        t.heightForWidth(w)
    assert len(t._layouts) <= text_module._LAYOUTS_KEPT


def test_a_new_font_is_laid_out_afresh(qtbot):
    """The font's key is kept between lookups: after setFont the text is measured and drawn in the new font, as a
    Text made with that font from the start."""
    kept = _shown(qtbot, CAUTION.format("92"), wrap=True)
    kept.grab()
    font = kept.font()
    font.setPointSizeF(font.pointSizeF() * 1.4)
    kept.setFont(font)
    fresh = _shown(qtbot, "", wrap=True)
    fresh.setFont(font)
    fresh.setText(CAUTION.format("92"))
    assert kept.heightForWidth(240) == fresh.heightForWidth(240) > _qt_height(CAUTION.format("92"), QWidget().font(),
                                                                               240)
    assert kept.grab().toImage() == fresh.grab().toImage()
