"""Test-wide rules.

The differential tests of the C twins (tests/**/test_*native*.py) build the C path and the pure path
themselves and compare them step by step, whatever LIVEFIX_PURE says; they carry the marker `twin`.
`make test` runs every test with the C cores, then every test but these with LIVEFIX_PURE=1: run
again there they would only repeat the same comparison (and would not fit the CI budget).
"""

from __future__ import annotations

import fnmatch

import pytest


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    for item in items:
        if fnmatch.fnmatch(item.path.name, "test_*native*.py"):
            item.add_marker(pytest.mark.twin)
