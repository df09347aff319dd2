from __future__ import annotations

import sys

from hazards.cli import main

sys.exit(main())
