"""The suite's shared settings: property-based tests draw the same examples on every run
(seeded, no example database), so a run is repeatable and CI never meets a new case by
chance; the long fuzz in tests/fuzz/ is where new cases are looked for."""

from hypothesis import settings

settings.register_profile("repeatable", derandomize=True, database=None, deadline=None)
settings.load_profile("repeatable")
