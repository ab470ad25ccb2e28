"""Remembered preferences (window size, units, appearance, acknowledgement) in QSettings.

``VENTSET_SETTINGS_DIR`` points QSettings at a private folder (INI format); tests and benchmarks set
it so they never touch the user's real settings.
"""

from __future__ import annotations

import hashlib
import os

from PySide6.QtCore import QSettings

from ventset.model import STANDING_NOTICE

ORGANISATION = "ventset"
APPLICATION = "ventset"
SETTINGS_DIR_ENV = "VENTSET_SETTINGS_DIR"
GAS_UNITS = ("mmHg", "kPa")


def open_settings() -> QSettings:
    """The application's QSettings (a private INI file when VENTSET_SETTINGS_DIR is set)."""
    folder = os.environ.get(SETTINGS_DIR_ENV)
    if folder:
        path = os.path.join(folder, f"{APPLICATION}.ini")
        return QSettings(path, QSettings.Format.IniFormat)
    return QSettings(ORGANISATION, APPLICATION)


def notice_fingerprint() -> str:
    """Short hash of the standing notice: a changed notice asks for acknowledgement again."""
    return hashlib.sha256(STANDING_NOTICE.encode()).hexdigest()[:16]


def is_acknowledged(settings: QSettings) -> bool:
    return str(settings.value("notice/acknowledged", "")) == notice_fingerprint()


def set_acknowledged(settings: QSettings) -> None:
    settings.setValue("notice/acknowledged", notice_fingerprint())
    settings.sync()


def gas_unit(settings: QSettings) -> str:
    u = str(settings.value("units/gas", "mmHg"))
    return u if u in GAS_UNITS else "mmHg"


def field_unit(settings: QSettings, key: str, choices: tuple[str, ...]) -> str:
    u = settings.value(f"units/{key}", None)
    return str(u) if u is not None and str(u) in choices else choices[0]
