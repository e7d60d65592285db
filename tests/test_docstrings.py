"""Every public name of every module carries a docstring (numpydoc habit)."""

import importlib
import inspect
import pkgutil

import noisebudget


def _modules():
    for info in pkgutil.walk_packages(noisebudget.__path__, "noisebudget."):
        if info.name.endswith("__main__"):
            continue
        yield importlib.import_module(info.name)


def test_public_names_have_docstrings():
    missing = []
    for mod in _modules():
        assert mod.__doc__, f"{mod.__name__} has no module docstring"
        for name in getattr(mod, "__all__", []):
            obj = getattr(mod, name)
            if (inspect.isfunction(obj) or inspect.isclass(obj)) and not inspect.getdoc(obj):
                missing.append(f"{mod.__name__}.{name}")
    assert not missing, missing
