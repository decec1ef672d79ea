"""`python -m soaklog` is the same as the `soaklog` command."""

from __future__ import annotations

import sys

from soaklog.cli import main

sys.exit(main())
