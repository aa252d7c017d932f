"""Test-session settings and fixtures shared by every test file.

The computations are many small linear-algebra problems; a multi-threaded BLAS only adds
overhead to them (and heavy contention on a shared 2-core machine), so the whole session runs
with one BLAS thread. Results do not depend on it.

Hypothesis runs under one profile, ``ttsp``: derandomized (the examples follow from each test's
source, so a run repeats exactly), with no example database and a deadline generous enough for a
shared 2-core machine. Its caches (constants read from the source, Unicode tables) go to the
system's temporary folder instead of a .hypothesis/ folder in the checkout.

The synthetic campaigns of the tests are written by tests/_campaigns.py; the fixture below hands
out the campaign file many command-line test files share.
"""

from __future__ import annotations

import tempfile
from datetime import timedelta
from pathlib import Path

import pytest
from _campaigns import write_noisy_campaign
from hypothesis import settings
from hypothesis.configuration import set_hypothesis_home_dir
from threadpoolctl import threadpool_limits

_BLAS_LIMIT = threadpool_limits(limits=1, user_api="blas")

settings.register_profile("ttsp", derandomize=True, database=None,
                          deadline=timedelta(seconds=5))
settings.load_profile("ttsp")
set_hypothesis_home_dir(Path(tempfile.gettempdir()) / "ttsp-tests-hypothesis")


@pytest.fixture(scope="module")
def campaign_file(tmp_path_factory):
    """The campaign file of the command-line tests (``write_noisy_campaign``: 10 isotherms from
    0 to 45 °C x 8 frequencies, WLF C1 = 9, C2 = 100 K at 20 °C, 1 % noise), written once per
    test module; tests must not change it."""
    return write_noisy_campaign(tmp_path_factory.mktemp("in") / "sweeps.csv")

