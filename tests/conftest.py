import pytest

from tnarena.catalog import load_catalog


@pytest.fixture(scope="session")
def catalog():
    """Everything installed: built-ins plus entry-point plugins (strict: a broken one fails)."""
    return load_catalog(strict=True)
