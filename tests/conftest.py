import sys
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
for p in (str(HERE), str(ROOT)):
    if p not in sys.path:
        sys.path.insert(0, p)


@pytest.fixture(scope="session")
def ridge_advice():
    """advise on the Φ ridge of the zoo (tests/advice_cases.py), shared by every test that reads it."""
    import advice_cases

    return advice_cases.ridge_advice()


@pytest.fixture(scope="session")
def net_advice():
    """advise on a small tanh network with three negligible inputs (tests/advice_cases.py)."""
    import advice_cases

    return advice_cases.net_advice()


def pytest_collection_modifyitems(config, items):
    """Longer statistical checks (marked ``slow``) run only when asked for: ``python -m pytest -m slow``."""
    if config.getoption("markexpr"):
        return
    skip = pytest.mark.skip(reason="a longer statistical check: run with -m slow")
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)
