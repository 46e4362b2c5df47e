"""``python -m cr3bp.integrate [build [--if-stale] | status]``: the prebuilt kernels
(:mod:`cr3bp.integrate.prebuilt`)."""

import sys

from .prebuilt import main

sys.exit(main())
