"""The one presentation layer of the core: how numbers, units, rows and sentences are shown.

Everything a person reads (the text report, the record summary, the PDF, the window's panels) is
rendered here from a Plan's own values in the chosen units. No Qt.
"""
