import os
import signal
import sys
from pathlib import Path

import pytest
from hypothesis import settings

# Test helpers (tests/builders.py) are imported as a plain module.
sys.path.insert(0, str(Path(__file__).parent))

# Hypothesis profiles.  "ci" (the default) is derandomized: the same examples on every run, so a
# red build is reproducible and a green one does not hide a flake; no example database is kept.
# "long" draws fresh random examples, ten times as many, for a run by hand:
#     SDMNET_HYPOTHESIS=long .venv/bin/python -m pytest tests/test_cli_fuzz.py
# Tests that fix their own max_examples keep it; the others scale with the profile.
settings.register_profile("ci", derandomize=True, database=None, deadline=None, print_blob=True)
settings.register_profile("long", max_examples=1000, deadline=None, print_blob=True)
settings.load_profile(os.environ.get("SDMNET_HYPOTHESIS", "ci"))


@pytest.fixture
def sigint_raises():
    """SIGINT raises KeyboardInterrupt during the test, as in a foreground run, even when pytest
    itself was started with SIGINT ignored (a background job of a shell without job control)."""
    before = signal.signal(signal.SIGINT, signal.default_int_handler)
    yield
    signal.signal(signal.SIGINT, before)
