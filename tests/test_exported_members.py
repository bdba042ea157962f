"""The public API is listed once in __all__ (httpx-style check)."""

import convdiag


def test_all_lists_exactly_the_public_names():
    public = {name for name in dir(convdiag) if not name.startswith("_")}
    modules = {name for name in public if type(getattr(convdiag, name)).__name__ == "module"}
    assert set(convdiag.__all__) - {"__version__"} == public - modules


def test_every_public_name_has_a_docstring():
    for name in convdiag.__all__:
        obj = getattr(convdiag, name)
        if callable(obj) and not isinstance(obj, dict):
            assert obj.__doc__, name
