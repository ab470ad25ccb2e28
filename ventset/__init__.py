"""ventset: draft starting ventilator settings for anaesthetised animals of any species."""

__version__ = "0.1.0"
