"""The public surface: ``import symbias`` offers a small set of names, each documented with a runnable example.

Reference: the contributor guide's conventions (numpydoc docstrings with a
short runnable example; the examples themselves run as doctests of their
modules) and ``python -X importtime`` (a cheap ``import symbias``).
"""

import inspect
import subprocess
import sys

import symbias

PUBLIC = [name for name in symbias.__all__ if name != "__version__"]


def test_the_surface_is_small():
    assert 25 <= len(PUBLIC) <= 45, len(PUBLIC)


def test_every_name_resolves_and_is_documented():
    for name in PUBLIC:
        value = getattr(symbias, name)
        doc = inspect.getdoc(value)
        assert doc and len(doc.splitlines()[0]) > 10, name
        if inspect.isfunction(value) or (inspect.isclass(value) and not issubclass(value, Exception)):
            assert "Examples" in doc or "Examples" in (inspect.getdoc(inspect.getmodule(value)) or ""), name


def test_import_is_cheap():
    code = "import sys, symbias; print(sorted(m for m in ('sympy', 'numpy', 'networkx', 'matplotlib') if m in sys.modules))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == "[]"


def test_unknown_name_is_an_attribute_error():
    try:
        symbias.no_such_name  # noqa: B018
    except AttributeError as err:
        assert "no_such_name" in str(err)
    else:
        raise AssertionError("expected AttributeError")
