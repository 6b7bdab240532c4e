"""Fixtures shared by several test modules. Keep this file small."""

from __future__ import annotations

import pytest
from threadpoolctl import threadpool_limits

from featuresift.demo import make_grain_lots


@pytest.fixture(scope="session")
def grain_small():
    """300 invented grain lots (seed 0). Shared across tests: do not modify it in place."""
    return make_grain_lots(n_lots=300, seed=0)


@pytest.fixture
def single_blas_thread():
    """Run a test with BLAS/OpenMP limited to one thread (small fits are faster so,
    and far faster when the two cores are shared). Opt in with
    ``pytestmark = pytest.mark.usefixtures("single_blas_thread")``."""
    with threadpool_limits(limits=1):
        yield
