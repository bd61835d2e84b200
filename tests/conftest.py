"""Shared fixtures: one user per role, plus an outsider of each kind."""

from __future__ import annotations

import pytest

from tests.factories import UserFactory


@pytest.fixture
def office_user(db):
    return UserFactory(username="office1", role="office")


@pytest.fixture
def technician(db):
    return UserFactory(username="tech1", role="technician")


@pytest.fixture
def other_technician(db):
    return UserFactory(username="tech2", role="technician")


@pytest.fixture
def manager(db):
    return UserFactory(username="manager1", role="manager")
