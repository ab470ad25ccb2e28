"""``python -m ventset``."""

import sys

from ventset.cli import main

sys.exit(main())
