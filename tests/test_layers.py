"""The package's layer order holds: no module imports a layer above its own (DEVELOPERS.md)."""

import ast
import os
import pathlib
import subprocess
import sys

import pytest

import arealaw

SRC = pathlib.Path(arealaw.__file__).parent

#: Layers from the bottom; a module may import its own layer and those listed before it.
LAYERS = ["_version", "_errors", "_numerics", "_arguments", "_costs", "_progress", "_parallel",
          "network", "correlators",
          "spectrum", "methods", "_entropy", "workflow", "views", "cli", "__init__", "__main__"]
LEVEL = {name: i for i, name in enumerate(LAYERS)}


def _layer(parts):
    """Layer of a module given its path parts inside the package."""
    head = parts[0].removesuffix(".py")
    if head not in LEVEL:
        raise AssertionError(f"module {'/'.join(parts)} is in no layer; add it to LAYERS and to "
                             "DEVELOPERS.md")
    return head


def _imports(path):
    """Package-relative targets ('network', '_entropy', ...) of every import in ``path``."""
    rel = path.relative_to(SRC)
    package = list(rel.parts[:-1])
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[:len(package) - (node.level - 1)] if node.level > 1 else package
                mod = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "arealaw":
                mod = node.module.split(".")[1:]
            else:
                continue
            if not mod:  # "from .. import x": a subpackage/module, or a name of __init__
                name = node.names[0].name
                mod = [name if (SRC / name).is_dir() or (SRC / f"{name}.py").is_file()
                       else "__init__"]
            yield mod[0], node.lineno
        elif isinstance(node, ast.Import):
            for alias in node.names:
                parts = alias.name.split(".")
                if parts[0] == "arealaw":
                    yield (parts[1] if len(parts) > 1 else "__init__"), node.lineno


MODULES = sorted(p for p in SRC.rglob("*.py"))


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(SRC)))
def test_module_imports_only_layers_below(path):
    own = _layer(path.relative_to(SRC).parts)
    for target, line in _imports(path):
        layer = _layer([target])
        assert LEVEL[layer] <= LEVEL[own], \
            f"{path.relative_to(SRC)}:{line} imports {target} ({layer}), a layer above {own}"


def test_layer_checker_sees_an_upward_import(tmp_path):
    # the checker must be able to fail: a lower layer importing a higher one is reported
    bad = SRC / "network" / "_probe_layers_tmp.py"
    try:
        bad.write_text("from .._entropy import entropy\n", encoding="utf-8")
        with pytest.raises(AssertionError, match="a layer above network"):
            test_module_imports_only_layers_below(bad)
    finally:
        bad.unlink()


def test_import_does_not_load_matplotlib():
    # views import matplotlib on first use only; a fresh interpreter shows what `import` loads
    code = "import arealaw, sys; print('matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, env={**os.environ, "PYTHONPATH": str(SRC.parent)})
    assert out.stdout.strip() == "False"
