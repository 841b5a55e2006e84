"""The layer rules of docs/method.md §3: each part of the package imports only from the layers
below it. Read from the source with `ast`, so an import inside a function counts too."""
import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "prismdesign"

#: Part of the package -> the parts it may import (docs/method.md, section 3).
ALLOWED = {
    "_display": set(),
    "materials": {"_display", "dispersion_data"},
    "optics": {"_display"},
    "prisms": {"_display", "materials", "optics"},
    "analysis": {"_display", "materials", "optics", "prisms"},
    "design": {"_display", "materials", "optics", "prisms", "analysis"},
    "output": {"_display", "materials", "optics", "prisms", "analysis", "design", "__init__"},
    "cli": {"_display", "materials", "optics", "prisms", "analysis", "design", "output",
            "__init__", "cli_design", "cli_tolerance", "cli_workflow", "cli_files"},
    # Output-file checks shared by the verbs: writes through the output layer only.
    "cli_files": {"output"},
    "cli_design": {"_display", "materials", "optics", "prisms", "analysis", "design", "output",
                   "__init__", "cli_files"},
    "cli_workflow": {"_display", "materials", "optics", "prisms", "analysis", "design", "output",
                     "__init__", "cli_files"},
    "cli_tolerance": {"_display", "materials", "optics", "prisms", "analysis", "design",
                      "output", "__init__", "cli_design", "cli_files"},
}


#: Subpackages and top-level modules of prismdesign.
PARTS = {p.stem for p in PACKAGE.iterdir()
         if (p.is_dir() and (p / "__init__.py").exists()) or p.suffix == ".py"} - {"__init__"}


def _part(path):
    """The layer a module belongs to: its subpackage, or its own name at the top level."""
    relative = path.relative_to(PACKAGE).with_suffix("")
    return relative.parts[0]


def _imported_parts(source, package):
    """Parts of prismdesign imported by `source`, a module living in `package` (a tuple such as
    ("prismdesign", "optics")), resolved from absolute and relative imports."""
    found = set()
    for node in ast.walk(ast.parse(source)):
        targets = []
        if isinstance(node, ast.Import):
            targets = [tuple(alias.name.split(".")) for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = package[:len(package) - node.level + 1] if node.level else ()
            full = base + (tuple(node.module.split(".")) if node.module else ())
            # "from .. import analysis": a name that is a part is imported as that part;
            # other names ("from . import material") come from the package root.
            targets = ([full + ((alias.name,) if alias.name in PARTS else ())
                        for alias in node.names] if full == ("prismdesign",) else [full])
        for target in targets:
            if target and target[0] == "prismdesign":
                found.add(target[1] if len(target) > 1 else "__init__")
    return found


def _imports_of(path):
    relative = path.relative_to(PACKAGE).with_suffix("")
    return _imported_parts(path.read_text(encoding="utf-8"),
                           ("prismdesign",) + relative.parts[:-1])


MODULES = sorted(p for p in PACKAGE.rglob("*.py") if "__pycache__" not in p.parts)


def test_every_part_has_a_rule():
    assert {_part(p) for p in MODULES} - {"__init__"} <= set(ALLOWED)


@pytest.mark.parametrize("path", MODULES, ids=[str(p.relative_to(PACKAGE)) for p in MODULES])
def test_module_imports_only_from_lower_layers(path):
    part = _part(path)
    if part == "__init__":
        return                       # the package root re-exports the public API
    imported = _imports_of(path) - {part}
    assert imported <= ALLOWED[part], (
        f"{path.relative_to(PACKAGE)} ({part}) imports {sorted(imported - ALLOWED[part])}, "
        f"above its layer; allowed: {sorted(ALLOWED[part])}")


def test_the_import_reader_sees_upward_imports():
    # The reader itself must see an upward import, or the rule above could never fail.
    optics = ("prismdesign", "optics")
    assert _imported_parts("from ..prisms import wollaston", optics) == {"prisms"}
    assert _imported_parts("from .. import analysis, output", optics) == {"analysis", "output"}
    assert _imported_parts("from .vectors import cross", optics) == {"optics"}
    assert _imported_parts("def f():\n    import prismdesign.output.demo", optics) == {"output"}
    assert _imported_parts("import numpy as np", optics) == set()
    assert _imported_parts("from . import material", ("prismdesign",)) == {"__init__"}
    assert "analysis" in _imports_of(PACKAGE / "output" / "demo.py")
