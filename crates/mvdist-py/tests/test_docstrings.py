"""Every example in the docstrings runs and prints what it shows."""

import doctest

import mvdist
import mvdist._native


def test_docstring_examples():
    # Classes report the module "mvdist", functions "mvdist._native".
    modules = [mvdist, mvdist._native]
    attempted = 0
    for m in modules:
        result = doctest.testmod(m, raise_on_error=False, verbose=False)
        assert result.failed == 0, m.__name__
        attempted += result.attempted
    assert attempted >= 50


def test_every_public_item_has_a_docstring():
    for name in mvdist.__all__:
        item = getattr(mvdist, name)
        if isinstance(item, str) or name.startswith("__"):
            continue
        assert item.__doc__, name
        if callable(item) and name != "MvdistError":
            assert "Example:" in item.__doc__, f"{name} has no example"
        if isinstance(item, type):
            for attr, member in vars(item).items():
                if not attr.startswith("_"):
                    assert member.__doc__, f"{name}.{attr}"
