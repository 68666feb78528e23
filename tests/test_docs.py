"""House rules that keep the package readable: documented public names, short modules."""

import importlib
import inspect
import pathlib

import pytest

import arealaw

SRC = pathlib.Path(arealaw.__file__).parent

#: The public namespaces (each with a sorted ``__all__``).
NAMESPACES = ["arealaw", "arealaw.correlators", "arealaw.correlators.sparse",
              "arealaw.correlators.spectral", "arealaw.methods", "arealaw.network",
              "arealaw.spectrum", "arealaw.views", "arealaw.workflow"]
#: Longest module, in lines (DEVELOPERS.md: one concept per private module).
MAX_LINES = 500


def _undocumented(namespace):
    mod = importlib.import_module(namespace)
    for name in mod.__all__:
        obj = getattr(mod, name)
        if not (inspect.isclass(obj) or inspect.isfunction(obj)):
            continue
        if not inspect.getdoc(obj):
            yield name
        if inspect.isclass(obj):
            for attr, value in vars(obj).items():
                func = value.fget if isinstance(value, property) else getattr(
                    value, "__func__", value)
                if attr.startswith("_") or not inspect.isfunction(func):
                    continue
                # a method documented by the base class it overrides counts as documented
                doc = inspect.getdoc(func if isinstance(value, property) else getattr(obj, attr))
                if not doc:
                    yield f"{name}.{attr}"


@pytest.mark.parametrize("namespace", NAMESPACES)
def test_public_names_and_methods_have_docstrings(namespace):
    mod = importlib.import_module(namespace)
    assert list(mod.__all__) == sorted(mod.__all__), f"{namespace}.__all__ is not sorted"
    missing = list(_undocumented(namespace))
    assert not missing, f"{namespace}: no docstring for {', '.join(missing)}"


@pytest.mark.parametrize("path", sorted(SRC.rglob("*.py")), ids=lambda p: str(p.relative_to(SRC)))
def test_modules_are_short(path):
    lines = len(path.read_text(encoding="utf-8").splitlines())
    assert lines <= MAX_LINES, f"{path.relative_to(SRC)} has {lines} lines (> {MAX_LINES})"
