"""Shared fixtures: the bundled model files, loaded once per session."""

import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
MODELS = ROOT / "models"


def _load(name):
    if str(MODELS) not in sys.path:
        sys.path.insert(0, str(MODELS))
    return __import__(name)


@pytest.fixture(scope="session")
def sphere_mod():
    return _load("sphere")


@pytest.fixture(scope="session")
def cpn_mod():
    return _load("projective_space")


@pytest.fixture(scope="session")
def half_plane_mod():
    return _load("half_plane")


@pytest.fixture(scope="session")
def oscillator_mod():
    return _load("oscillator")


@pytest.fixture(scope="session")
def cotangent_mod():
    return _load("cotangent")


@pytest.fixture(scope="session")
def broken_mod():
    sys.path.insert(0, str(MODELS / "broken"))
    return __import__("planted_mistakes")
