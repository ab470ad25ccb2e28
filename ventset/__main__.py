"""``python -m ventset``."""

import gc
import sys

# Start-up makes some hundred thousand objects and none of them is garbage: the cyclic collector would run
# about 180 times over them (a tenth of the window's start-up). ventset.cli.main turns it on again (the
# window's after its first frame).
gc.disable()

from ventset.cli import main  # noqa: E402

sys.exit(main())
