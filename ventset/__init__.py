"""ventset: draft starting ventilator settings for anaesthetised animals of any species."""

from ventset import methodcache as _methodcache

__version__ = "0.1.0"

_methodcache.install()  # before any module here makes a dataclass (ventset.methodcache)
