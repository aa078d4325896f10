"""One fuzz workshop (canary file, case folders) per test module."""

import pytest

from tests.fuzz.harness import Workshop


@pytest.fixture(scope="module")
def workshop():
    with Workshop() as shop:
        yield shop
