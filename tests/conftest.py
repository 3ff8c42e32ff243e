"""Shared test settings: hypothesis profiles.

``ci`` (chosen when the ``CI`` environment variable is set) is derandomised,
so a run is the same on every machine, and keeps no example database;
``dev`` (otherwise) draws fresh examples each run and remembers failures in
``.hypothesis/``. Neither has a deadline: schedules of many periods take
variable time, and speed is measured in bench/, not asserted in tests. Choose
a profile by hand with ``pytest --hypothesis-profile=dev``.
"""

from __future__ import annotations

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, deadline=None, database=None, print_blob=True)
settings.register_profile("dev", deadline=None)
settings.load_profile("ci" if os.environ.get("CI") else "dev")
