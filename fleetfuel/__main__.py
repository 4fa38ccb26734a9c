"""``python -m fleetfuel``."""

from __future__ import annotations

import sys

from fleetfuel.cli import main

sys.exit(main())
