"""Shared fixtures: solutions are cached per configuration so that tests can share one solve."""

import functools
import json

import pytest

import relbasis


@functools.lru_cache(maxsize=64)
def _cached(key: str):
    data = json.loads(key)
    return relbasis.solve(None, **data)


def solve_cached(**sections):
    """relbasis.solve(None, **sections), computed once per distinct argument set in a test run."""
    return _cached(json.dumps(sections, sort_keys=True))


@pytest.fixture
def solved():
    return solve_cached
