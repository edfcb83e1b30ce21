"""Shared fixtures: datasets that scikit-learn ships (no download)."""

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer, load_iris, load_wine


@pytest.fixture(scope="session")
def iris():
    d = load_iris()
    return d.data, d.target


@pytest.fixture(scope="session")
def wine():
    d = load_wine()
    return d.data, d.target


@pytest.fixture(scope="session")
def cancer():
    d = load_breast_cancer()
    return d.data[:, :10], d.target


def rng(seed):
    """Invented data for properties and simulations, with a fixed seed."""
    return np.random.default_rng(seed)
