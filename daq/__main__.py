"""`python -m daq` is the same as the `soaklog` command."""

from __future__ import annotations

import sys

from daq.cli import main

sys.exit(main())
