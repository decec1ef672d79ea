"""The test-support package: helpers shared by the test folders (``pythonpath = ["tests"]`` in pyproject.toml).

- ``testkit.waiting``: ``wait_for`` (poll a condition with a deadline) and ``wait_until`` (the same in a Textual app)
- ``testkit.clocks``: ``EPOCH_UTC_S``, ``ManualClock`` (moves only when told), ``frozen_clock``
- ``testkit.lab``: ``LabRun``, the simulated lab and the real logger in a folder (fixture ``lab_run`` in tests/conftest.py)
- ``testkit.factories``: ``closing_all``, a fixture's factory that closes everything it made
- ``testkit.drivers``, ``testkit.dashboard``, ``testkit.report``: the values and stores those folders' tests share
- ``testkit.store``: ``old_store``, a file as an older soaklog wrote it (the migration tests)

Import from here or from the module: ``from testkit import wait_for``. Never ``from conftest import …``: which
conftest that names depends on the order of the folders on the command line.
"""

from __future__ import annotations

from testkit.clocks import EPOCH_MS, EPOCH_UTC_S, ManualClock, frozen_clock
from testkit.factories import closing_all
from testkit.lab import LabRun
from testkit.waiting import wait_for, wait_until

__all__ = ["EPOCH_MS", "EPOCH_UTC_S", "LabRun", "ManualClock", "closing_all", "frozen_clock", "wait_for", "wait_until"]
