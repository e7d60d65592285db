"""Data flows one way: physics modules never import file parsing or units.

Files -> layers -> stack -> bands -> budget -> reports (DESIGN.md, architecture). The layer
classes declare their file keys as data (``schema``) and are built from SI values; the
file boundary (schema, stack files, catalogs, studies, units) reads the files.
"""

import ast
import pkgutil
from pathlib import Path

import noisebudget

PACKAGE = Path(noisebudget.__file__).parent
FILE_BOUNDARY = {"units", "schema", "stackfile", "study", "catalog", "layerfile", "keyref",
                 "tradefile", "resources", "cli", "cli_study", "cli_tile", "cli_trade"}
PHYSICS = ["media", "stack", "incidence", "finite_size", "bands", "ratings", "budget", "tiles",
           *[f"layers.{m.name}" for m in pkgutil.iter_modules([str(PACKAGE / "layers")])],
           "layers"]


def _imports(module: str) -> set[str]:
    """Every noisebudget module a module imports, at the top or inside functions."""
    path = PACKAGE / (module.replace(".", "/") + ".py")
    if not path.exists():
        path = PACKAGE / module.replace(".", "/") / "__init__.py"
    package = module.rsplit(".", 1)[0] if "." in module or path.name == "__init__.py" \
        else ""
    if path.name == "__init__.py":
        package = module
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom) and node.level:
            base = package.split(".") if package else []
            base = base[:len(base) - (node.level - 1)] if node.level > 1 else base
            target = ".".join([*base, *(node.module.split(".") if node.module else [])])
            found |= {target} if node.module else {".".join([*base, a.name])
                                                    for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.module and \
                node.module.startswith("noisebudget"):
            found.add(node.module.removeprefix("noisebudget").lstrip("."))
        elif isinstance(node, ast.Import):
            found |= {a.name.removeprefix("noisebudget").lstrip(".") for a in node.names
                      if a.name.startswith("noisebudget")}
    return found


def test_physics_modules_do_not_import_the_file_boundary():
    offending = {m: sorted(i for i in _imports(m) if i.split(".")[0] in FILE_BOUNDARY)
                 for m in PHYSICS}
    assert not {m: i for m, i in offending.items() if i}


def test_the_check_sees_imports_inside_functions():
    assert "schema" in _imports("stackfile") and "budget" in _imports("study")
