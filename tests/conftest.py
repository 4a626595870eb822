"""Fixtures shared by the test files: the bundled machine files and the demo machine.

The plain constants behind them (``GEOMETRIES``, ``DEMO``) are in ``paths.py`` for code
that runs at import time.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from paths import DEMO, GEOMETRIES, demo_table

from fluxlab.spec.machine_file import load_machine
from fluxlab.spec.types import MachineSpec


@pytest.fixture(scope="session")
def geometries() -> Path:
    """The folder of the bundled machine files."""
    return GEOMETRIES


@pytest.fixture(scope="session")
def demo_path() -> Path:
    """The demo machine file."""
    return DEMO


@pytest.fixture(scope="session")
def demo_spec() -> MachineSpec:
    """The validated demo machine, loaded once (MachineSpec is frozen; replace_path copies)."""
    return load_machine(DEMO)


@pytest.fixture
def demo_raw() -> dict:
    """A deep copy of the demo machine file's TOML table: each test may change its own."""
    return demo_table()
