"""The package's imports follow one direction of data flow (DESIGN.md section 2; docs/reactions.md, "Outputs"):
the command line sits on top of everything, the run (qcthermo.workflow) on top of the science and the exporters.
Read from the source with Python's ast module, so a lazy import inside a function counts as well."""

import ast
from pathlib import Path

import qcthermo

PACKAGE = Path(qcthermo.__file__).parent
#: modules allowed to import the command line: the command line itself
CLI = {"qcthermo.cli", "qcthermo.__main__"}


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _type_checking_blocks(tree: ast.AST) -> set[int]:
    """ids of the import nodes under ``if TYPE_CHECKING:`` (type hints only, never run)."""
    return {id(n) for node in ast.walk(tree) if isinstance(node, ast.If) and getattr(node.test, "id", "") ==
            "TYPE_CHECKING" for n in ast.walk(node)}


def imports(path: Path) -> list[tuple[str, bool]]:
    """(absolute module imported, only for type hints) of every import statement in ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    hints = _type_checking_blocks(tree)
    package = _module_name(path).split(".") if path.name == "__init__.py" else _module_name(path).split(".")[:-1]
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, id(node) in hints) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = package[:len(package) - node.level + 1] if node.level else []
            module = ".".join([*base, *(node.module.split(".") if node.module else [])])
            out += [(module, id(node) in hints)]
            out += [(f"{module}.{a.name}", id(node) in hints) for a in node.names]  # "from . import workflow"
    return out


def modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _is(module: str, target: str) -> bool:
    return module == target or module.startswith(target + ".")


def test_nothing_below_the_command_line_imports_it():
    found = [f"{name} imports {m}" for name, path in modules().items()
             if name not in CLI and not _is(name, "qcthermo.commands")
             for m, _ in imports(path) if _is(m, "qcthermo.commands") or m in CLI]
    assert found == []


def test_only_the_command_line_imports_the_run():
    # the science and the exporters take a run's results as an argument; they name RunResults for type hints only
    found = [f"{name} imports {m}" for name, path in modules().items()
             if name not in CLI | {"qcthermo.workflow"} and not _is(name, "qcthermo.commands")
             for m, hint in imports(path) if _is(m, "qcthermo.workflow") and not hint]
    assert found == []


def test_the_import_walk_sees_relative_imports():
    # the walk itself: commands/run.py imports the run lazily, "from ..workflow import run"
    assert ("qcthermo.workflow", False) in imports(PACKAGE / "commands" / "run.py")
    assert ("qcthermo.workflow", True) in imports(PACKAGE / "export" / "run_outputs.py")
